import { defaultSearchSpaceFor, spaceIssuesForData, ValidationError, type RunConfig } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import { loadDataset, type LoadedDataset } from '../importers/index.js';
import { rungEpochsFor } from '../search/rung-epochs.js';

/**
 * A run file's data, read, split, encoded and checked against its search space; nothing written
 * yet. `config` has every setting that depends on the data filled in (the rungs of successive
 * halving), so the stored run records the numbers it used.
 */
export interface PreparedRun {
  config: RunConfig;
  loaded: LoadedDataset;
}

/**
 * Everything a new run needs that can fail on the user's input: reads the dataset, checks the
 * search space fits it and derives the rungs the run file leaves out. Writes nothing, so a
 * coordinator can do it before it creates its store, its tokens or its HTTP server, and a bad run
 * file leaves nothing behind.
 */
export async function prepareRun(config: RunConfig, log: Logger): Promise<PreparedRun> {
  const loaded = await loadDataset(config, { log });
  const prepared = loaded.dataset;
  const data = { inputShape: prepared.inputShape, numClasses: prepared.classNames.length, ...(prepared.target ? { target: prepared.target } : {}) };
  const issues = spaceIssuesForData(config.searchSpace ?? defaultSearchSpaceFor(data.inputShape), data);
  if (issues.length) throw new ValidationError('run configuration', issues.map((message) => ({ path: '/searchSpace', message })));
  const rungs = rungEpochsFor(prepared.train.count, config.search);
  return { config: { ...config, search: { ...config.search, ...rungs } }, loaded };
}
