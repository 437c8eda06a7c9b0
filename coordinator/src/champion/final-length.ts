import type { EpochRecord } from '@netbreeder/shared-types';

/** How many epochs a final training (on train + validation) gets, and which rule set it. */
export interface FinalLength {
  epochs: number;
  /**
   * `run-file`: the run file's `champion.epochs`; `learning-curve`: the epoch of the best validation
   * accuracy in the genome's longest search training; `genome-epochs`: that training recorded no
   * validation accuracy per epoch (or there was none), so the epochs it was given; `still-rising`:
   * the curve reached its best in its last quarter, so the final training takes the whole final
   * budget (`champion.maxSamples`) there is; `within-noise`: its last epoch scored within the
   * noise of a validation score of its best, so the curve says no more than "still as good" and
   * the final training takes the whole final budget (or, without one, as many epochs as the curve).
   */
  rule: 'run-file' | 'learning-curve' | 'genome-epochs' | 'still-rising' | 'within-noise';
  /** One sentence for the report and the event. */
  detail: string;
}

/**
 * The final training's length for one genome. With `champion.epochs` in the run file, that number.
 * Otherwise its learning curve decides: in `history` (the per-epoch record of its longest search
 * training, on the train split, scored on validation) the epoch with the highest validation
 * accuracy (the earliest among equals), at least 1; validation accuracy rather than loss because
 * accuracy is what chose the champion. A training without per-epoch validation scores falls back
 * to `budgetEpochs`, the epochs it was given. When the best epoch lies in the curve's last quarter
 * (it was still improving near its end, so the curve does not say where it would peak) and the
 * run gives the final training a budget of `budgetMaxEpochs` epochs (from `champion.maxSamples`),
 * it takes that whole budget. So it does when the curve's last epoch is within the noise of a
 * validation score of its best (`valCount` validation samples: two standard errors of an accuracy,
 * 2·sqrt(p(1−p)/n) at the best accuracy p; common practice for telling a real drop from a noisy
 * plateau): an earlier best is then as likely chance as overfitting, and a longer training on more
 * data is the better bet. Without `valCount` (a regression run's fitness is no accuracy) only the
 * best epoch counts, and `task: 'regression'` names its score a fitness in the sentence. Pure.
 */
export function finalTrainingLength(fixed: number | undefined, history: readonly EpochRecord[], budgetEpochs: number, budgetMaxEpochs?: number, valCount?: number, task: 'classification' | 'regression' = 'classification'): FinalLength {
  // A regression run's fitness, 1 / (1 + standardised RMSE), is named so in the sentence, never an accuracy.
  const bestScore = (v: number) => (task === 'regression' ? `best validation fitness, ${v.toFixed(4)}` : `best validation accuracy, ${(v * 100).toFixed(2)}%`);
  if (fixed !== undefined) return { epochs: fixed, rule: 'run-file', detail: `${fixed} epochs, as the run file's champion.epochs sets` };
  let best: EpochRecord | null = null;
  for (const r of history) if (r.valAccuracy !== null && (best === null || r.valAccuracy > best.valAccuracy!)) best = r;
  if (best === null) {
    const epochs = Math.max(1, budgetEpochs);
    return { epochs, rule: 'genome-epochs', detail: `${epochs} epochs, its search training's budget (its learning curve has no validation scores)` };
  }
  const epochs = Math.max(1, best.epoch);
  const last = history[history.length - 1]!;
  // Peaked in its last quarter (always so under a decaying schedule, whose rate reaches its floor
  // at the end): the curve does not say where a longer training would peak.
  const lateBest = best.epoch > 0.75 * last.epoch;
  if (budgetMaxEpochs !== undefined && lateBest && budgetMaxEpochs > epochs) {
    return {
      epochs: budgetMaxEpochs,
      rule: 'still-rising',
      detail: `${budgetMaxEpochs} epochs, the whole final budget (champion.maxSamples): its longest search training (${history.length} epochs) reached its ${bestScore(best.valAccuracy!)}, in its last quarter (epoch ${best.epoch})`,
    };
  }
  const lastScored = [...history].reverse().find((r) => r.valAccuracy !== null)!;
  const p = best.valAccuracy!;
  const noise = valCount ? 2 * Math.sqrt((p * (1 - p)) / valCount) : 0;
  if (valCount && lastScored !== best && p - lastScored.valAccuracy! <= noise) {
    const length = Math.max(budgetMaxEpochs ?? 0, lastScored.epoch, epochs);
    return {
      epochs: length,
      rule: 'within-noise',
      detail:
        `${length} epochs, ${budgetMaxEpochs === undefined ? 'as long as its longest search training' : 'the whole final budget (champion.maxSamples)'}: its longest search training (${history.length} epochs) ` +
        `reached ${(p * 100).toFixed(2)}% at epoch ${best.epoch} and still ${(lastScored.valAccuracy! * 100).toFixed(2)}% at epoch ${lastScored.epoch}, within the noise of ${valCount} validation samples (±${(noise * 100).toFixed(2)} points)`,
    };
  }
  return {
    epochs,
    rule: 'learning-curve',
    detail: `${epochs} epoch(s), where its longest search training (${history.length} epochs) reached its ${bestScore(best.valAccuracy!)}`,
  };
}
