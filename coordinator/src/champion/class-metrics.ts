/**
 * Per-class figures of a classifier from its confusion matrix (rows: true class, columns:
 * predicted class), and the accuracy of the baseline that always predicts the most common class.
 * Pure: the report and champion.json show them next to the champion's accuracy.
 */

/** One class's precision, recall and F1 (null where undefined: nothing predicted, or no sample of the class), and its number of samples. */
export interface ClassFigures {
  precision: number | null;
  recall: number | null;
  f1: number | null;
  support: number;
}

export function perClassFigures(confusion: readonly (readonly number[])[]): ClassFigures[] {
  return confusion.map((row, k) => {
    const truePositives = row[k] ?? 0;
    const support = row.reduce((a, b) => a + b, 0);
    const predicted = confusion.reduce((a, r) => a + (r[k] ?? 0), 0);
    const precision = predicted > 0 ? truePositives / predicted : null;
    const recall = support > 0 ? truePositives / support : null;
    const f1 = precision === null || recall === null ? null : precision + recall === 0 ? 0 : (2 * precision * recall) / (precision + recall);
    return { precision, recall, f1, support };
  });
}

/** The unweighted mean of the defined F1 scores (macro F1); null when none is defined. */
export function macroF1(figures: readonly ClassFigures[]): number | null {
  const defined = figures.map((f) => f.f1).filter((v): v is number => v !== null);
  return defined.length ? defined.reduce((a, b) => a + b, 0) / defined.length : null;
}

/**
 * Always predicting the class most common in `counts` (the training split's counts when known;
 * the first such class on a tie), scored on the test split whose true labels `confusion` holds.
 */
export function majorityClassBaseline(counts: readonly number[], confusion: readonly (readonly number[])[]): { classIndex: number; accuracy: number } {
  let classIndex = 0;
  counts.forEach((n, k) => {
    if (n > counts[classIndex]!) classIndex = k;
  });
  const total = confusion.reduce((a, row) => a + row.reduce((x, y) => x + y, 0), 0);
  const ofClass = (confusion[classIndex] ?? []).reduce((a, b) => a + b, 0);
  return { classIndex, accuracy: total > 0 ? ofClass / total : 0 };
}
