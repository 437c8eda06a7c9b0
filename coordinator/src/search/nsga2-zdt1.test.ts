import { describe, expect, it } from 'vitest';
import { createRandom, type Random } from '@netbreeder/shared-types';
import { crowdedCompare, hypervolume2d, nonDominatedSort, rankAndCrowding, selectSurvivors } from './nsga2.js';

/**
 * A small real-coded NSGA-II on ZDT1, driving the selection functions of nsga2.ts: binary crowded
 * tournaments, simulated binary crossover (SBX) and polynomial mutation (both with distribution
 * index 20, crossover probability 0.9, mutation probability 1/n: common practice for these
 * operators), elitist survivor selection from parents + children. Our own code, written from the
 * operators' textbook definitions.
 */
const N_VARS = 30;
const POP = 100;
const ETA = 20;

// ZDT1 (Zitzler, Deb, Thiele, Evolutionary Computation 8(2), 2000), n = 30, x in [0,1]^n, as recorded
// in /work/shared/REFERENCES.md: f1 = x1, g = 1 + 9·sum(x2..xn)/(n-1), f2 = g·(1 - sqrt(f1/g)).
const zdt1 = (x: readonly number[]): [number, number] => {
  let sum = 0;
  for (let i = 1; i < x.length; i++) sum += x[i]!;
  const g = 1 + (9 * sum) / (x.length - 1);
  return [x[0]!, g * (1 - Math.sqrt(x[0]! / g))];
};

const clamp = (v: number) => Math.min(1, Math.max(0, v));

function sbx(a: readonly number[], b: readonly number[], rng: Random): [number[], number[]] {
  const c1 = [...a];
  const c2 = [...b];
  if (!rng.chance(0.9)) return [c1, c2];
  for (let i = 0; i < a.length; i++) {
    if (!rng.chance(0.5)) continue;
    const u = rng.next();
    const beta = u <= 0.5 ? (2 * u) ** (1 / (ETA + 1)) : (1 / (2 * (1 - u))) ** (1 / (ETA + 1));
    c1[i] = clamp(0.5 * ((1 + beta) * a[i]! + (1 - beta) * b[i]!));
    c2[i] = clamp(0.5 * ((1 - beta) * a[i]! + (1 + beta) * b[i]!));
  }
  return [c1, c2];
}

function polynomialMutation(x: number[], rng: Random): number[] {
  return x.map((v) => {
    if (!rng.chance(1 / N_VARS)) return v;
    const u = rng.next();
    const delta = u < 0.5 ? (2 * u) ** (1 / (ETA + 1)) - 1 : 1 - (2 * (1 - u)) ** (1 / (ETA + 1));
    return clamp(v + delta);
  });
}

/** Runs the GA and returns the hypervolume of the first front after each generation (index 0: initial). */
function runZdt1(seed: number, generations: number): number[] {
  const rng = createRandom(seed);
  let pop = Array.from({ length: POP }, () => Array.from({ length: N_VARS }, () => rng.next()));
  let objs = pop.map(zdt1);
  const hv = (o: [number, number][]) => hypervolume2d(nonDominatedSort(o)[0]!.map((i) => o[i]!), [11, 11]);
  const history = [hv(objs)];
  for (let gen = 0; gen < generations; gen++) {
    const rc = rankAndCrowding(objs);
    const tournament = () => {
      const a = rng.int(0, POP - 1);
      const b = rng.int(0, POP - 1);
      return crowdedCompare(b, a, rc) < 0 ? b : a;
    };
    const children: number[][] = [];
    while (children.length < POP) {
      const [c1, c2] = sbx(pop[tournament()]!, pop[tournament()]!, rng);
      children.push(polynomialMutation(c1, rng), polynomialMutation(c2, rng));
    }
    const all = [...pop, ...children];
    const allObjs = [...objs, ...children.map(zdt1)];
    const keep = selectSurvivors(allObjs, POP);
    pop = keep.map((i) => all[i]!);
    objs = keep.map((i) => allObjs[i]!);
    history.push(hv(objs));
  }
  return history;
}

describe('NSGA-II on ZDT1', () => {
  // Target: the hypervolume of ZDT1's true front with reference (11, 11) is 120.6667
  // (/work/shared/REFERENCES.md); within 1% means at least 119.46. Bound: 500 generations of 100
  // (50,000 evaluations). Measured with this driver: seeds 1, 2, 3 first got there after 334, 257
  // and 354 generations.
  const TARGET = 120.6667;
  const GENERATIONS = 500;

  it.each([1, 2, 3])(`seed %i: the front reaches a hypervolume within 1 percent of ${TARGET} in at most ${GENERATIONS} generations`, (seed) => {
    const history = runZdt1(seed, GENERATIONS);
    const reached = history.findIndex((h) => h >= 0.99 * TARGET);
    expect(history[0]).toBeLessThan(0.99 * TARGET); // random starting points are far from the front
    expect(reached).toBeGreaterThan(0);
    expect(reached).toBeLessThanOrEqual(GENERATIONS);
    expect(history.at(-1)!).toBeGreaterThanOrEqual(0.99 * TARGET);
    expect(history.at(-1)!).toBeLessThanOrEqual(TARGET); // no set of points can beat the true front
    // Elitism keeps the front: crowding may thin it a little, but it never falls back far.
    for (let g = 1; g < history.length; g++) expect(history[g]!).toBeGreaterThan(history[g - 1]! - 0.05);
  });
});
