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
 * How far the reference network must lead on `heldBack` samples to replace the search's champion
 * (classification): two standard errors of an accuracy at the reference network's score,
 * 2·sqrt(p(1−p)/n) (common practice for telling a real difference from noise; the same rule as
 * the final training's length in `final-length.ts`). 0 for a regression run, whose fitness is no
 * accuracy, and without a count.
 */
export function heldBackMargin(referenceScore: number, heldBack: number | undefined, task: 'classification' | 'regression' = 'classification'): number {
  if (task === 'regression' || !heldBack || heldBack < 1) return 0;
  return 2 * Math.sqrt((referenceScore * (1 - referenceScore)) / heldBack);
}

/**
 * Which final training is exported: the reference network's only when it scored higher on the
 * `heldBack` held-back validation samples than the search's champion by more than
 * {@link heldBackMargin}; a lead within the noise, a tie or a missing score keeps the search's
 * choice, which already won on the search's own validation evidence. Accuracy for
 * classification, the search's fitness for regression (strictly higher, no noise rule): higher is
 * better for both.
 */
export function heldBackWinner(championScore: number | null | undefined, referenceScore: number | null | undefined, heldBack?: number, task: 'classification' | 'regression' = 'classification'): 'search' | 'reference' {
  if (typeof championScore !== 'number' || typeof referenceScore !== 'number') return 'search';
  const lead = referenceScore - championScore;
  return lead > 0 && lead > heldBackMargin(referenceScore, heldBack, task) ? 'reference' : 'search';
}
