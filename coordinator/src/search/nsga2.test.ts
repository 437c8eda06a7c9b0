import { describe, expect, it } from 'vitest';
import { crowdedCompare, crowdingDistance, dominates, hypervolume2d, nonDominatedSort, paretoFront, rankAndCrowding, selectSurvivors } from './nsga2.js';
import type { Observation } from './search-algorithm.js';

describe('dominates', () => {
  it('needs no worse everywhere and better somewhere (all objectives minimised)', () => {
    expect(dominates([1, 2], [2, 2])).toBe(true);
    expect(dominates([1, 2], [1, 2])).toBe(false);
    expect(dominates([1, 3], [2, 2])).toBe(false);
    expect(dominates([2, 2], [1, 3])).toBe(false);
  });
});

describe('nonDominatedSort', () => {
  it('splits hand-placed points into their fronts', () => {
    // front 0: (1,5) (2,3) (3,1) and a duplicate (2,3); front 1: (2,5) (4,3); front 2: (5,5)
    const pts = [[2, 5], [1, 5], [5, 5], [2, 3], [4, 3], [3, 1], [2, 3]];
    expect(nonDominatedSort(pts)).toEqual([[1, 3, 5, 6], [0, 4], [2]]);
  });

  it('handles no points, one point, and a chain', () => {
    expect(nonDominatedSort([])).toEqual([]);
    expect(nonDominatedSort([[0, 0]])).toEqual([[0]]);
    expect(nonDominatedSort([[3, 3], [1, 1], [2, 2]])).toEqual([[1], [2], [0]]);
  });

  it('refuses vectors of different lengths or NaN', () => {
    expect(() => nonDominatedSort([[1, 2], [1]])).toThrow(/objective vector 1 has 1 objectives, the first has 2/);
    expect(() => nonDominatedSort([[1, Number.NaN]])).toThrow(/not a number/);
  });
});

describe('crowdingDistance', () => {
  it('boundary points are infinite; interior points sum (f[i+1]-f[i-1])/(f_max-f_min) per objective', () => {
    // The rule of Deb et al., IEEE TEC 2002 (as recorded in /work/shared/REFERENCES.md); the values
    // are computed by hand: f1 range 10, f2 range 8.
    //   (1,6): (3-0)/10 + (8-3)/8 = 0.925;  (3,3): (7-1)/10 + (6-1)/8 = 1.225;  (7,1): (10-3)/10 + (3-0)/8 = 1.075
    const pts = [[7, 1], [0, 8], [3, 3], [10, 0], [1, 6]];
    const d = crowdingDistance(pts, [0, 1, 2, 3, 4]);
    expect(d[1]).toBe(Infinity);
    expect(d[3]).toBe(Infinity);
    expect(d[4]).toBeCloseTo(0.925, 12);
    expect(d[2]).toBeCloseTo(1.225, 12);
    expect(d[0]).toBeCloseTo(1.075, 12);
  });

  it('works on a subset of the points, and fronts of one or two are all boundary', () => {
    const pts = [[9, 9], [0, 2], [1, 1], [2, 0]];
    expect(crowdingDistance(pts, [1, 2, 3])).toEqual([Infinity, 2, Infinity]); // (2-0)/2 + (2-0)/2
    expect(crowdingDistance(pts, [1, 3])).toEqual([Infinity, Infinity]);
    expect(crowdingDistance(pts, [0])).toEqual([Infinity]);
    expect(crowdingDistance(pts, [])).toEqual([]);
  });

  it('an objective on which the front is equal adds nothing (no division by zero)', () => {
    const d = crowdingDistance([[0, 5], [1, 5], [3, 5]], [0, 1, 2]);
    expect(d).toEqual([Infinity, 1, Infinity]); // (3-0)/3 from f1, nothing from f2
  });
});

describe('crowded comparison and survivors', () => {
  // front 0: (1,5) (2,3) (3,1) (2.5,1.5); front 1: (2,5) (4,3); front 2: (5,5)
  const pts = [[1, 5], [2, 3], [3, 1], [2, 5], [4, 3], [5, 5], [2.5, 1.5]];
  const rc = rankAndCrowding(pts);

  it('lower rank wins, then larger crowding distance (hand-computed)', () => {
    // The crowded comparison of Deb et al., IEEE TEC 2002 (/work/shared/REFERENCES.md). Front 0 has
    // f1 range 2 and f2 range 4: (2,3) gets (2.5-1)/2 + (5-1.5)/4 = 1.625, (2.5,1.5) gets (3-2)/2 + (3-1)/4 = 1.
    expect(rc.rank).toEqual([0, 0, 0, 1, 1, 2, 0]);
    expect(rc.distance[1]).toBeCloseTo(1.625, 12);
    expect(rc.distance[6]).toBeCloseTo(1, 12);
    expect(crowdedCompare(6, 3, rc)).toBeLessThan(0); // rank 0 beats rank 1 whatever the distance
    expect(crowdedCompare(5, 4, rc)).toBeGreaterThan(0);
    expect(crowdedCompare(1, 6, rc)).toBeLessThan(0); // same rank: the less crowded wins
    expect(crowdedCompare(0, 1, rc)).toBeLessThan(0); // a boundary point beats an interior one
    expect(crowdedCompare(0, 2, rc)).toBe(0); // two boundary points
  });

  it('keeps whole fronts, then the least crowded of the last one', () => {
    expect(selectSurvivors(pts, 3)).toEqual([0, 1, 2]); // front 0 by distance: ∞, ∞, 1.625 (not 1)
    expect(selectSurvivors(pts, 5)).toEqual([0, 1, 2, 3, 6]); // front 0, then one of front 1 (both ∞: lower index)
    expect(selectSurvivors(pts, 6)).toEqual([0, 1, 2, 3, 4, 6]);
    expect(selectSurvivors(pts, 7)).toEqual([0, 1, 2, 3, 4, 5, 6]);
    expect(selectSurvivors(pts, 0)).toEqual([]);
  });
});

describe('hypervolume2d', () => {
  it('is the area dominated by a staircase, computed by hand', () => {
    // ref (4,4): (1,3) adds (2-1)·(4-3) = 1 over f1 in [1,2); (2,1) adds (4-2)·(4-1) = 6 over [2,4): 7
    expect(hypervolume2d([[1, 3], [2, 1]], [4, 4])).toBe(7);
    // a dominated point, a duplicate and a point outside the reference change nothing
    expect(hypervolume2d([[1, 3], [2, 1], [3, 3], [2, 1], [5, 0]], [4, 4])).toBe(7);
    expect(hypervolume2d([], [4, 4])).toBe(0);
    expect(hypervolume2d([[0, 0]], [11, 11])).toBe(121);
  });

  it('approaches 120.6667 on a dense sample of the ZDT1 front with reference (11, 11)', () => {
    // ZDT1 (Zitzler, Deb, Thiele 2000) front f2 = 1 - sqrt(f1); its hypervolume with reference (11, 11)
    // is 121 - 1/3 = 120.6667 (/work/shared/REFERENCES.md). A staircase of 10,001 points under-counts slightly.
    const pts = Array.from({ length: 10_001 }, (_, i) => [i / 10_000, 1 - Math.sqrt(i / 10_000)]);
    const hv = hypervolume2d(pts, [11, 11]);
    expect(hv).toBeLessThan(120.6667);
    expect(hv).toBeGreaterThan(120.66);
  });
});

describe('paretoFront', () => {
  const obs = (id: string, fitness: number, params: number, flops?: number): Observation<string> => ({
    evaluationId: id, genomeHash: id, genome: id, fitness, params, flops,
  });

  it('keeps the results no other beats on accuracy and size, smallest first', () => {
    const list = [obs('a', 0.9, 1000, 5), obs('b', 0.8, 100, 50), obs('c', 0.85, 500, 1), obs('d', 0.7, 600, 2), obs('e', 0.95, 5000)];
    expect(paretoFront(list, 'params').map((o) => o.evaluationId)).toEqual(['b', 'c', 'a', 'e']);
    // by FLOPs: e has none and is left out; c (0.85 at 1) and a (0.9 at 5) are the front
    expect(paretoFront(list, 'flops').map((o) => o.evaluationId)).toEqual(['c', 'a']);
    expect(paretoFront([], 'params')).toEqual([]);
  });
});
