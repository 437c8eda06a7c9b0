/**
 * A regression run keeps its fitness, 1 / (1 + RMSE on the standardised target), in the fields the
 * wire format calls `…Accuracy` (see DEVELOPERS.md, "Regression runs: where the numbers live").
 * The files a person reads must not call it an accuracy: this renames every such key of a JSON
 * document, at any depth, `accuracy` → `fitness` and `…Accuracy` → `…Fitness` (`valAccuracy` →
 * `valFitness`, as GET /status names it). Values are copied unchanged. Pure.
 */
export function withFitnessNames(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(withFitnessNames);
  if (value === null || typeof value !== 'object') return value;
  return Object.fromEntries(Object.entries(value).map(([key, v]) => [key.replace(/^accuracy$/, 'fitness').replace(/Accuracy/g, 'Fitness'), withFitnessNames(v)]));
}
