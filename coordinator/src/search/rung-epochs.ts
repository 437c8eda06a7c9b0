import { InternalError } from '@netbreeder/shared-types';
import { rungBudgets } from './hyperband-brackets.js';
import { SEARCH_SETTING_DEFAULTS } from './search-settings.js';

/**
 * The rungs of successive halving when the run file leaves them out, from the size of the
 * training split: the lowest rung trains on at least {@link LOWEST_RUNG_SAMPLES} samples and the
 * top rung nine times as long (1 and 9 epochs from 1,800 training samples up, as the defaults were;
 * 3 and 27 for 600). Pure.
 *
 * Why: on the search benchmark's invented tiles (600 training samples) one epoch is 5 to 38
 * optimizer steps, and 9 of one run's 13 first-rung results lay within 5 points of chance (25%),
 * so promotions and parents were drawn by noise; rungs of 3, 9 and 27 epochs cut the champions'
 * test error there from 3.78 ± 0.37% to 1.83 ± 0.85% (five seeds, 144,000 samples;
 * docs/search-benchmark.md). On MNIST's 3,000 training digits one epoch already ranks networks,
 * and 1 to 9 epochs stay.
 */
export const LOWEST_RUNG_SAMPLES = 1800;

/** The largest rung budget a run file accepts. */
const MAX_RUNG_EPOCHS = 1000;

export interface RungEpochs {
  minEpochs: number;
  maxEpochs: number;
}

/**
 * `given`'s numbers where it has them, else the rule above; a given `maxEpochs` below the derived
 * `minEpochs` lowers that to it (one rung).
 */
export function rungEpochsFor(trainCount: number, given: Partial<RungEpochs>): RungEpochs {
  if (!Number.isInteger(trainCount) || trainCount < 1) throw new InternalError(`trainCount must be a positive whole number, got ${trainCount}`);
  const derived = Math.min(MAX_RUNG_EPOCHS, Math.ceil(LOWEST_RUNG_SAMPLES / trainCount));
  const minEpochs = given.minEpochs ?? Math.min(derived, given.maxEpochs ?? derived);
  const maxEpochs = given.maxEpochs ?? Math.min(MAX_RUNG_EPOCHS, 9 * minEpochs);
  return { minEpochs, maxEpochs };
}

/**
 * The search method as a person reads it: the algorithm's name, and for the successive-halving
 * methods the rungs it trains (`asha-evolution, rungs of 3, 9 and 27 epochs`).
 */
export function describeSearchMethod(search: { algorithm: string; eta?: number; minEpochs?: number; maxEpochs?: number }): string {
  if ((search.algorithm !== 'asha' && search.algorithm !== 'asha-evolution') || search.minEpochs === undefined || search.maxEpochs === undefined) return search.algorithm;
  const rungs = rungBudgets(search.minEpochs, search.maxEpochs, search.eta ?? SEARCH_SETTING_DEFAULTS.eta);
  const list = rungs.length === 1 ? `${rungs[0]}` : `${rungs.slice(0, -1).join(', ')} and ${rungs.at(-1)}`;
  return `${search.algorithm}, ${rungs.length === 1 ? 'one rung of' : 'rungs of'} ${list} epochs`;
}
