/** Settings of a search algorithm, as a run gives them. Defaults are applied in {@link resolveSearchSettings} only. */
export interface SearchSettings {
  /** Living members that parents are drawn from (P in regularized evolution). */
  populationSize: number;
  /** Members drawn, with replacement, per tournament (S in regularized evolution). */
  sampleSize: number;
  /** Most random mutations applied to the minimal genome of an initial member of aging evolution;
   * each initial member gets a count drawn uniformly from 0 to this, so the first population is
   * diverse without being far from minimal.
   * @default 2 */
  initialMutations?: number;
  /** Most random mutations applied to the minimal genome of a random-search sample; each sample
   * gets a count drawn uniformly from 0 to this.
   * @default 12 */
  randomMutations?: number;
}

export type ResolvedSearchSettings = Required<SearchSettings>;

export const SEARCH_SETTING_DEFAULTS = { initialMutations: 2, randomMutations: 12 } as const;

/** Applies the defaults and checks every value, naming the one that is wrong. */
export function resolveSearchSettings(settings: SearchSettings): ResolvedSearchSettings {
  const resolved: ResolvedSearchSettings = {
    populationSize: settings.populationSize,
    sampleSize: settings.sampleSize,
    initialMutations: settings.initialMutations ?? SEARCH_SETTING_DEFAULTS.initialMutations,
    randomMutations: settings.randomMutations ?? SEARCH_SETTING_DEFAULTS.randomMutations,
  };
  const whole = (name: keyof ResolvedSearchSettings, min: number) => {
    const v = resolved[name];
    if (!Number.isInteger(v) || v < min) throw new RangeError(`search setting ${name} must be a whole number ≥ ${min}, got ${String(v)}`);
  };
  whole('populationSize', 1);
  whole('sampleSize', 1);
  whole('initialMutations', 0);
  whole('randomMutations', 0);
  return resolved;
}
