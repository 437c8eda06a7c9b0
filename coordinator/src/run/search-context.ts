import { dataShapeOf, defaultSearchSpaceFor } from '@netbreeder/shared-types';
import type { SearchContext } from '../search/index.js';
import { runReference, type RunLike } from '../champion/reference-network.js';

/** What the search algorithm of `run` is made with: the space, the data's shape, the seed and the fitted reference network (if it has one that fits). */
export function searchContextOf(run: RunLike): SearchContext {
  const m = run.dataset.manifest;
  const reference = runReference(run);
  const data = dataShapeOf(m);
  return {
    space: run.config.searchSpace ?? defaultSearchSpaceFor(data.inputShape),
    data,
    seed: run.seed,
    ...(reference?.ok ? { reference: { genome: reference.genome, description: reference.description, adjustments: reference.adjustments } } : {}),
  };
}
