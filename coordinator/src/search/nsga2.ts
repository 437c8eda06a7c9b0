/**
 * The selection machinery of NSGA-II (Deb, Pratap, Agarwal, Meyarivan, IEEE Transactions on
 * Evolutionary Computation 6(2), 2002) as pure functions over objective vectors. Every objective is
 * MINIMISED; negate one to maximise it (accuracy becomes -accuracy).
 */
import type { Observation } from './search-algorithm.js';
import type { SizeObjective } from './search-settings.js';
import { InternalError } from '@netbreeder/shared-types';

/** One point in objective space: every entry is minimised. */
export type ObjectiveVector = readonly number[];

/** True when `a` is no worse than `b` in every objective and better in at least one. */
export function dominates(a: ObjectiveVector, b: ObjectiveVector): boolean {
  let better = false;
  for (let m = 0; m < a.length; m++) {
    if (a[m]! > b[m]!) return false;
    if (a[m]! < b[m]!) better = true;
  }
  return better;
}

const checkPoints = (points: readonly ObjectiveVector[]) => {
  const dims = points[0]?.length ?? 0;
  points.forEach((p, i) => {
    if (p.length !== dims) throw new InternalError(`objective vector ${i} has ${p.length} objectives, the first has ${dims}; give every point the same objectives`);
    if (!p.every((v) => typeof v === 'number' && !Number.isNaN(v))) throw new InternalError(`objective vector ${i} holds a value that is not a number: [${p.join(', ')}]`);
  });
};

/**
 * Fast non-dominated sorting: the indices of `points` split into fronts, front 0 being the points
 * no other point dominates, front 1 those dominated only by front 0, and so on. Each front lists
 * its indices in ascending order. O(M·N²) comparisons.
 */
export function nonDominatedSort(points: readonly ObjectiveVector[]): number[][] {
  checkPoints(points);
  const n = points.length;
  const dominatedBy = Array.from({ length: n }, () => 0); // how many points dominate i
  const dominatesList: number[][] = Array.from({ length: n }, () => []); // the points i dominates
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      if (dominates(points[i]!, points[j]!)) {
        dominatesList[i]!.push(j);
        dominatedBy[j]!++;
      } else if (dominates(points[j]!, points[i]!)) {
        dominatesList[j]!.push(i);
        dominatedBy[i]!++;
      }
    }
  }
  const fronts: number[][] = [];
  let current = dominatedBy.flatMap((c, i) => (c === 0 ? [i] : []));
  while (current.length) {
    fronts.push(current);
    const next: number[] = [];
    for (const i of current) {
      for (const j of dominatesList[i]!) if (--dominatedBy[j]! === 0) next.push(j);
    }
    current = next.sort((a, b) => a - b);
  }
  return fronts;
}

/**
 * Crowding distance of each member of one front (aligned with `front`): per objective, the members
 * are sorted by that objective, the two boundary members get Infinity, and each interior member
 * adds (f[next] - f[previous]) / (f_max - f_min). An objective on which the whole front is equal adds
 * nothing. Fronts of one or two members are all boundary.
 */
export function crowdingDistance(points: readonly ObjectiveVector[], front: readonly number[]): number[] {
  const distance = front.map(() => 0);
  if (!front.length) return distance;
  const dims = points[front[0]!]!.length;
  for (let m = 0; m < dims; m++) {
    const order = front.map((_, k) => k).sort((a, b) => points[front[a]!]![m]! - points[front[b]!]![m]! || a - b);
    const lo = points[front[order[0]!]!]![m]!;
    const hi = points[front[order.at(-1)!]!]![m]!;
    distance[order[0]!] = Infinity;
    distance[order.at(-1)!] = Infinity;
    if (!(hi > lo) || !Number.isFinite(hi - lo)) continue;
    for (let k = 1; k < order.length - 1; k++) {
      distance[order[k]!]! += (points[front[order[k + 1]!]!]![m]! - points[front[order[k - 1]!]!]![m]!) / (hi - lo);
    }
  }
  return distance;
}

/** Non-domination rank (0 = first front) and crowding distance within its front, for every point. */
export interface RankAndCrowding {
  rank: number[];
  distance: number[];
}

export function rankAndCrowding(points: readonly ObjectiveVector[]): RankAndCrowding {
  const rank = points.map(() => 0);
  const distance = points.map(() => 0);
  nonDominatedSort(points).forEach((front, r) => {
    const d = crowdingDistance(points, front);
    front.forEach((i, k) => {
      rank[i] = r;
      distance[i] = d[k]!;
    });
  });
  return { rank, distance };
}

/**
 * The crowded comparison: negative when point `a` is better than `b` (a lower rank, or the same
 * rank and a larger crowding distance), positive when worse, 0 when neither.
 */
export function crowdedCompare(a: number, b: number, rc: RankAndCrowding): number {
  if (rc.rank[a] !== rc.rank[b]) return rc.rank[a]! - rc.rank[b]!;
  const da = rc.distance[a]!;
  const db = rc.distance[b]!;
  return da === db ? 0 : da > db ? -1 : 1;
}

/**
 * Elitist survivor selection of NSGA-II: the indices of the `count` points kept, filling whole
 * fronts in order and taking the last front's members by decreasing crowding distance (lower index
 * first among equals). Returned in ascending index order.
 */
export function selectSurvivors(points: readonly ObjectiveVector[], count: number): number[] {
  if (!Number.isInteger(count) || count < 0) throw new InternalError(`survivor count must be a whole number ≥ 0, got ${count}`);
  const kept: number[] = [];
  for (const front of nonDominatedSort(points)) {
    if (kept.length + front.length <= count) {
      kept.push(...front);
      continue;
    }
    const d = crowdingDistance(points, front);
    const order = front.map((_, k) => k).sort((a, b) => (d[b]! === d[a]! ? a - b : d[b]! > d[a]! ? 1 : -1));
    kept.push(...order.slice(0, count - kept.length).map((k) => front[k]!));
    break;
  }
  return kept.sort((a, b) => a - b);
}

/**
 * Hypervolume of a set of two-objective points (both minimised) against a reference point: the
 * area of the region dominated by the set and bounded by `ref`. Points not strictly better than
 * `ref` in both objectives add nothing; dominated points and duplicates are harmless.
 */
export function hypervolume2d(points: readonly ObjectiveVector[], ref: readonly [number, number]): number {
  const inside = points.filter((p) => p[0]! < ref[0] && p[1]! < ref[1]).sort((a, b) => a[0]! - b[0]! || a[1]! - b[1]!);
  // The staircase: sweeping f1 upwards, only points lowering the best f2 so far are on the front.
  const stairs: [number, number][] = [];
  for (const p of inside) if (!stairs.length || p[1]! < stairs.at(-1)![1]) stairs.push([p[0]!, p[1]!]);
  let area = 0;
  stairs.forEach(([f1, f2], i) => {
    area += ((stairs[i + 1]?.[0] ?? ref[0]) - f1) * (ref[1] - f2);
  });
  return area;
}

/**
 * The Pareto front of a run's results for a report: the observations no other one beats on both
 * validation accuracy (higher is better) and `objective` (lower is better), in increasing
 * `objective` order. Observations without a finite value of `objective` are left out.
 */
export function paretoFront<G>(observations: readonly Observation<G>[], objective: SizeObjective): Observation<G>[] {
  const usable = observations.filter((o) => typeof o[objective] === 'number' && Number.isFinite(o[objective]));
  const points = usable.map((o) => [-o.fitness, o[objective]!]);
  const front = nonDominatedSort(points)[0] ?? [];
  return front.map((i) => usable[i]!).sort((a, b) => a[objective]! - b[objective]! || b.fitness - a.fitness);
}
