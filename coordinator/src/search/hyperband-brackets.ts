/**
 * The budget arithmetic of successive halving and Hyperband (Li, Jamieson, DeSalvo, Rostamizadeh,
 * Talwalkar, JMLR 2018). Pure integer arithmetic: no logarithms, so no rounding surprises.
 */
import { NetbreederError } from '@netbreeder/shared-types';

/** One round of successive halving inside a bracket: `configurations` trained for `resource` each. */
export interface HalvingRound {
  configurations: number;
  resource: number;
}

/** One Hyperband bracket: successive halving started with `configurations` at `resource`. */
export interface HyperbandBracket {
  /** The bracket index s, from s_max (most configurations, least resource) down to 0. */
  s: number;
  /** n = ceil((s_max + 1) · eta^s / (s + 1)) configurations to start with. */
  configurations: number;
  /** r = R · eta^(-s), the resource each starting configuration gets. */
  resource: number;
  /** The rounds i = 0..s: floor(n · eta^(-i)) configurations at r · eta^i. */
  rounds: HalvingRound[];
}

const checkWhole = (name: string, v: number, min: number) => {
  if (!Number.isInteger(v) || v < min) throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `${name} must be a whole number ≥ ${min}, got ${String(v)}`);
};

/** The largest s with eta^s ≤ R, i.e. floor(log_eta R), computed exactly. */
function floorLog(R: number, eta: number): number {
  let s = 0;
  for (let p = eta; p <= R; p *= eta) s++;
  return s;
}

/**
 * Every Hyperband bracket for maximum resource `R` (a whole multiple of eta^s_max, as in the
 * published examples) and reduction factor `eta`, from s = s_max down to 0.
 */
export function hyperbandBrackets(R: number, eta: number): HyperbandBracket[] {
  checkWhole('R (the maximum resource)', R, 1);
  checkWhole('eta', eta, 2);
  const sMax = floorLog(R, eta);
  const brackets: HyperbandBracket[] = [];
  for (let s = sMax; s >= 0; s--) {
    const etaS = eta ** s;
    const configurations = Math.ceil(((sMax + 1) * etaS) / (s + 1)); // both integers: exact up to 2^53
    const resource = R / etaS;
    const rounds: HalvingRound[] = [];
    for (let i = 0; i <= s; i++) rounds.push({ configurations: Math.floor(configurations / eta ** i), resource: resource * eta ** i });
    brackets.push({ s, configurations, resource, rounds });
  }
  return brackets;
}

/**
 * The rung budgets of asynchronous successive halving: minEpochs · eta^k while below maxEpochs,
 * then maxEpochs itself as the top rung (so 1, 3, 9 for 1..9 and 1, 3, 9, 20 for 1..20, eta 3).
 * With minEpochs = maxEpochs there is a single rung and nothing is ever promoted.
 */
export function rungBudgets(minEpochs: number, maxEpochs: number, eta: number): number[] {
  checkWhole('minEpochs', minEpochs, 1);
  checkWhole('maxEpochs', maxEpochs, minEpochs);
  checkWhole('eta', eta, 2);
  const budgets: number[] = [];
  for (let b = minEpochs; b < maxEpochs; b *= eta) budgets.push(b);
  budgets.push(maxEpochs);
  return budgets;
}
