import { mkdir, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import type { RunRecord, RunStore } from '../store/run-store.js';
import { championFiles } from './champion-files.js';
import { ensembleFiles } from './ensemble-files.js';
import { NetbreederError } from '@netbreeder/shared-types';

/** Writes a run's champion export into `dir` (and its averaging ensemble, if any, into `dir/ensemble/`) (created when missing) and returns its absolute path. */
export async function exportChampion(store: RunStore, run: RunRecord, dir: string): Promise<string> {
  const files = championFiles(store, run);
  if (!files) throw new NetbreederError('NB_NO_CHAMPION', `run ${run.id} has no champion yet; wait until its state is 'finished'`);
  await mkdir(dir, { recursive: true });
  for (const [name, bytes] of files) await writeFile(join(dir, name), bytes);
  const ensemble = ensembleFiles(store, run);
  if (ensemble) {
    await mkdir(join(dir, 'ensemble'), { recursive: true });
    for (const [name, bytes] of ensemble) await writeFile(join(dir, 'ensemble', name), bytes);
  }
  return resolve(dir);
}
