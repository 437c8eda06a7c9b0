import { mkdir, writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { NetbreederError, type EnsembleRequestResponse } from '@netbreeder/shared-types';
import { CoordinatorClient } from './coordinator-client.js';

/** Downloads a run's champion export from a coordinator into `outDir` (its averaging ensemble, if any, into `outDir/ensemble/`); returns the files written. */
export async function downloadChampion(
  coordinatorUrl: string,
  runId: string,
  outDir: string,
  adminToken: string | null,
  onFile?: (name: string, bytes: number) => void,
): Promise<string[]> {
  const client = new CoordinatorClient(coordinatorUrl, adminToken);
  const summary = await client.champion(runId);
  const run = `/runs/${encodeURIComponent(runId)}`;
  // The averaging ensemble, when the run has one, goes into its own folder.
  const files = [
    ...summary.files.map((name) => ({ path: `${run}/champion/files/${encodeURIComponent(name)}`, to: name })),
    ...(summary.ensemble?.files ?? []).map((name) => ({ path: `${run}/ensemble/files/${encodeURIComponent(name)}`, to: join('ensemble', name) })),
  ];
  const written: string[] = [];
  for (const f of files) {
    const bytes = await client.file(f.path);
    await mkdir(join(outDir, dirname(f.to)), { recursive: true });
    await writeFile(join(outDir, f.to), bytes);
    onFile?.(f.to, bytes.length);
    written.push(resolve(outDir, f.to));
  }
  return written;
}

/**
 * Asks a coordinator for a new averaging ensemble of `size` members for a finished run
 * (`POST /runs/:id/ensemble`) and waits until it is trained and scored (the run is `finished`
 * again and its champion summary shows the ensemble of that round). Throws when refused or when
 * the run fails.
 */
export async function requestEnsembleAndWait(
  coordinatorUrl: string,
  runId: string,
  settings: { size: number; diversityPenalty?: number },
  adminToken: string | null,
  onAccepted?: (answer: EnsembleRequestResponse) => void,
  pollMs = 2000,
): Promise<EnsembleRequestResponse> {
  const client = new CoordinatorClient(coordinatorUrl, adminToken);
  const answer = await client.requestEnsemble(runId, settings);
  onAccepted?.(answer);
  for (;;) {
    await new Promise((r) => setTimeout(r, pollMs));
    const state = (await client.runs()).find((r) => r.id === runId)?.state;
    if (state === 'failed' || state === 'stopped') throw new NetbreederError('NB_RUN_STATE', `run ${runId} ended ${state} while its ensemble trained; see the coordinator's events`);
    if (state !== 'finished') continue;
    const summary = await client.champion(runId);
    if (summary.ensemble?.round === answer.round) return answer;
    throw new NetbreederError('NB_NO_ENSEMBLE', `run ${runId} finished its ensemble round ${answer.round} without scoring an ensemble (fewer than two members trained); see the coordinator's events`);
  }
}
