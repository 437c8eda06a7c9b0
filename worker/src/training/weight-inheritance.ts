/** A weight as the copy plan sees it: its layer-scoped name (`c1/kernel`) and shape. */
export interface WeightSpec {
  name: string;
  shape: readonly number[];
}

/** Which source weight each target weight takes; the others keep their fresh initialisation. */
export interface WeightCopyPlan {
  /** Pairs [target index, source index]. */
  copies: Array<[number, number]>;
  copied: number;
  total: number;
}

const sameShape = (a: readonly number[], b: readonly number[]) => a.length === b.length && a.every((v, i) => v === b[i]);

/**
 * Lamarckian weight inheritance, layer by layer: a target weight takes the source weight of the
 * same name (layer id and weight kind, e.g. `c1/kernel`) when its shape is the same; a renamed,
 * new or reshaped layer keeps its fresh initialisation. Genome node ids survive mutation, so a
 * child shares names with its parent for every layer the mutation did not touch. Pure.
 */
export function planWeightCopy(target: readonly WeightSpec[], source: readonly WeightSpec[]): WeightCopyPlan {
  const byName = new Map(source.map((s, i) => [s.name, i] as const));
  const copies: Array<[number, number]> = [];
  target.forEach((t, i) => {
    const j = byName.get(t.name);
    if (j !== undefined && sameShape(t.shape, source[j]!.shape)) copies.push([i, j]);
  });
  return { copies, copied: copies.length, total: target.length };
}
