/** A finished search result as the champion's choice sees it: validation evidence only (no test score exists yet). */
export interface SearchEvidence {
  id: string;
  genomeHash: string;
  seq: number;
  valAccuracy: number | null;
  params: number;
  job: { budget: { epochs: number } };
}

/**
 * One entry per distinct genome, best first, from its validation evidence alone: the results at
 * the largest training budget the genome had (an ASHA promotion's longer training outranks its
 * short rung-0 one; a genome evaluated several times at that budget is scored by their mean), then
 * ranked by that validation accuracy, fewer parameters among equals, then the earlier result. Each
 * entry is that genome's best result at that budget, with `valAccuracy` replaced by the mean and
 * `results` counting the results averaged. Pure; the test split plays no part.
 */
export function rankByValidation<E extends SearchEvidence>(results: readonly E[]): Array<E & { valAccuracy: number; results: number }> {
  const byGenome = new Map<string, E[]>();
  for (const r of results) if (r.valAccuracy !== null) byGenome.set(r.genomeHash, [...(byGenome.get(r.genomeHash) ?? []), r]);
  const ranked = [...byGenome.values()].map((rows) => {
    const budget = Math.max(...rows.map((r) => r.job.budget.epochs));
    const atBudget = rows.filter((r) => r.job.budget.epochs === budget);
    const best = atBudget.reduce((a, b) => (b.valAccuracy! > a.valAccuracy! || (b.valAccuracy === a.valAccuracy && b.seq < a.seq) ? b : a));
    const mean = atBudget.reduce((s, r) => s + r.valAccuracy!, 0) / atBudget.length;
    return { ...best, valAccuracy: mean, results: atBudget.length };
  });
  return ranked.sort((a, b) => b.valAccuracy - a.valAccuracy || a.params - b.params || a.seq - b.seq);
}
