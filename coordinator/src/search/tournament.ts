import { InternalError, type Random } from '@netbreeder/shared-types';

export interface TournamentResult {
  /** Index of the parent: the fittest of the drawn members (the earliest drawn among equals). */
  winner: number;
  /** The drawn indices in draw order (repeats possible). */
  drawn: number[];
}

/**
 * Tournament selection as regularized evolution uses it: draws `sampleSize` members uniformly with
 * replacement and returns the fittest drawn. A tie goes to the member drawn first. With `standing`
 * (one number per member, higher is better: successive halving's highest rung reached), a drawn
 * member of higher standing wins whatever its fitness, and fitness decides among equals.
 */
export function tournamentSelect(fitness: readonly number[], sampleSize: number, rng: Random, standing?: readonly number[]): TournamentResult {
  if (!fitness.length) throw new InternalError('tournamentSelect needs at least one member; observe a result first');
  if (!Number.isInteger(sampleSize) || sampleSize < 1) throw new InternalError(`sample size must be a whole number ≥ 1, got ${sampleSize}`);
  if (standing && standing.length !== fitness.length) throw new InternalError(`tournamentSelect got ${standing.length} standings for ${fitness.length} members`);
  const beats = (a: number, b: number) => {
    const up = standing ? standing[a]! - standing[b]! : 0;
    return up !== 0 ? up > 0 : fitness[a]! > fitness[b]!;
  };
  const drawn: number[] = [];
  let winner = -1;
  for (let i = 0; i < sampleSize; i++) {
    const k = rng.int(0, fitness.length - 1);
    drawn.push(k);
    if (winner < 0 || beats(k, winner)) winner = k;
  }
  return { winner, drawn };
}
