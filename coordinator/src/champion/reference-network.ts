import { dataShapeOf, defaultSearchSpaceFor, fitReferenceNetwork, genomeHash, type FittedReference, type RunConfig } from '@netbreeder/shared-types';
import type { RunRecord, RunStore } from '../store/run-store.js';

export type RunLike = Pick<RunRecord, 'config' | 'seed' | 'dataset'>;

/**
 * The run's reference network fitted to its search space, or null when the run has none: its run
 * file turned `search.reference` off, or it was stored before that setting existed (so its replay
 * stays exact). Pure: the same run always gives the same genome.
 */
export function runReference(run: RunLike): FittedReference | null {
  if ((run.config.search as Partial<RunConfig['search']>).reference !== true) return null;
  const m = run.dataset.manifest;
  const data = dataShapeOf(m);
  return fitReferenceNetwork(data, run.config.searchSpace ?? defaultSearchSpaceFor(data.inputShape));
}

/**
 * Records, when a run is created, what became of its reference network: a `reference-network`
 * event (its genome hash and how it was fitted to the search space), or one `reference-skipped`
 * event saying why the run goes without one. Nothing when the run file turned it off.
 */
export function logReference(store: RunStore, run: RunLike & { id: string }): void {
  const reference = runReference(run);
  if (!reference) return;
  if (reference.ok) store.logEvent(run.id, 'reference-network', { genomeHash: genomeHash(reference.genome), description: reference.description, adjustments: reference.adjustments });
  else store.logEvent(run.id, 'reference-skipped', { description: reference.description, reason: `the reference network cannot fit the search space: ${reference.reason}; the run goes on without one` });
}
