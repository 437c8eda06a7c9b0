import type { ChampionCandidate } from '@netbreeder/shared-types';

/** The most validation samples the held-back check keeps out of the final trainings. */
export const MAX_HELD_BACK = 5000;

/**
 * How many validation samples the final trainings of the champion and the reference network leave
 * out (`champion.selectionShare` of the validation split, at most {@link MAX_HELD_BACK}); 0 when
 * the check is off or the split is too small to hold any back and still train on some.
 */
export function heldBackCount(valCount: number, share: number | undefined): number {
  if (!share || share <= 0) return 0;
  const n = Math.min(MAX_HELD_BACK, Math.floor(valCount * share));
  return n >= 1 && n < valCount ? n : 0;
}

/**
 * The two candidates the held-back check compares: the search's champion and the run's reference
 * network, when both get a final training of their own (none when the reference is the champion,
 * or the run has no reference).
 */
export function heldBackPair(candidates: readonly ChampionCandidate[]): { champion: ChampionCandidate; reference: ChampionCandidate } | null {
  const champion = candidates.find((c) => c.champion !== false && !c.reference);
  const reference = candidates.find((c) => c.reference && c.champion === false);
  return champion && reference ? { champion, reference } : null;
}

/** Which side of the pair the final training keyed `seq` is, or null when it is neither. */
export function heldBackSide(pair: { champion: ChampionCandidate; reference: ChampionCandidate }, seq: number): 'champion' | 'reference' | null {
  return seq === pair.champion.seq ? 'champion' : seq === pair.reference.seq ? 'reference' : null;
}

/**
 * Which final training is exported: the reference network's only when it scored strictly higher on
 * the held-back validation samples than the search's champion (a tie, or a missing score, keeps
 * the search's choice). Accuracy for classification, the search's fitness for regression: higher
 * is better for both.
 */
export function heldBackWinner(championScore: number | null | undefined, referenceScore: number | null | undefined): 'search' | 'reference' {
  return typeof championScore === 'number' && typeof referenceScore === 'number' && referenceScore > championScore ? 'reference' : 'search';
}
