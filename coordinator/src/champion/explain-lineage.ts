import { rmseFromFitness, type SearchDecision, type SearchStep } from '@netbreeder/shared-types';
import type { RunStore } from '../store/run-store.js';

const short = (hash: string) => `\`${hash.slice(0, 12)}\``;
const percent = (v: number) => `${(v * 100).toFixed(1)}%`;

/**
 * One recorded search decision in plain words (Markdown), for the report. `target`: a regression
 * run's scaling, whose fitnesses are told as validation RMSE in the target's units. Pure.
 */
export function explainDecision(d: SearchDecision, target?: { std: number }): string {
  const score = target ? (f: number) => `RMSE ${Number((rmseFromFitness(f) * target.std).toPrecision(4))}` : percent;
  switch (d.kind) {
    case 'random-genome': {
      const start = { initial: 'As one of the first members of the population', 'extra-initial': 'As an extra first member (no result had arrived yet)', 'random-sample': 'As a random sample', fallback: 'As a fresh genome' }[d.role];
      return `${start}, it began as the minimal network with ${d.mutations.length ? `${d.mutations.length} random change(s): ${d.mutations.map((m) => `${m.operator} (${m.detail})`).join('; ')}` : 'no change'}.`;
    }
    case 'reference-network':
      return `It is the run's reference network, the one a careful practitioner writes by hand (${d.description})${d.adjustments.length ? `, fitted to the search space: ${d.adjustments.join('; ')}` : ''}.`;
    case 'parent-selected': {
      const drawn = d.drawn.map((m) => `${short(m.genomeHash)} ${score(m.fitness)}${m.front === undefined ? '' : ` front ${m.front + 1}`}`).join(', ');
      const how = d.method === 'tournament' ? (target ? 'the one of the lowest RMSE' : 'the most accurate of them') : 'the best of them by front, then by how little crowded it was';
      return `Its parent was chosen by drawing ${d.sampleSize} of the ${d.populationSize} living members at random (${drawn}); ${how}, ${short(d.winner.genomeHash)} (${score(d.winner.fitness)}), won.`;
    }
    case 'mutation':
      return `The child was made by ${d.operator}: ${d.detail}.`;
    case 'mutation-impossible':
      return `The chosen parent ${short(d.parentHash)} had no valid change (${d.message}).`;
    case 'promotion':
      return `It was promoted from rung ${d.fromRung} (${d.fromEpochs} epochs) to rung ${d.toRung} (${d.toEpochs} epochs): ${score(d.member.fitness)} placed it ${d.rank} of ${d.rungSize}, inside the top ${d.quota} (at least ${score(d.threshold)}).`;
    case 'reference-promotion':
      return `As the run's reference network it moved up from rung ${d.fromRung} (${d.fromEpochs} epochs) to rung ${d.toRung} (${d.toEpochs} epochs) whatever its rank (${score(d.member.fitness)}), so the choice has it at the longest training.`;
    case 'no-promotion':
      return 'No result was due for promotion, so a new genome started at the lowest rung.';
    case 'member-added':
      return `Its result (${score(d.member.fitness)}) joined ${d.rung === undefined ? 'the population' : `rung ${d.rung}`} (${d.size} now).`;
    case 'member-removed':
      return d.rule === 'oldest' ? `${short(d.member.genomeHash)} aged out as the oldest member.` : `${short(d.member.genomeHash)} left as the worst trade-off (front ${(d.member.front ?? 0) + 1}).`;
    case 'observation-ignored':
      return `Its result was not used (${d.why}).`;
    case 'rejected':
      return `The coordinator refused a ${d.subject}: ${d.issues.join('; ')}.`;
    case 'results-forgotten':
      return `${d.evaluationIds.length} result(s) were taken out of the search: ${d.reason}.`;
  }
}

/** The decisions worth telling about how a genome came to be: its proposal's, and each of its promotions. */
const telling = (s: SearchStep) => s.decisions.filter((d) => d.kind !== 'no-promotion' && d.kind !== 'member-added');

/**
 * "How it was found", step by step from the earliest recorded ancestor down to `genomeHash`: for
 * each genome on the line, the decisions that proposed it (tournament, mutation, or its random
 * start), then any promotions of the genome itself. Empty when the run has no decision log (runs
 * stored before it existed).
 */
export function howItWasFound(store: RunStore, runId: string, genomeHash: string): Array<{ genomeHash: string; evaluationId: string | null; lines: string[] }> {
  const target = store.getRun(runId)?.dataset.manifest.target;
  const explain = (d: SearchDecision) => explainDecision(d, target);
  const chain = store.lineageChain(runId, genomeHash);
  const line = [chain.length ? chain[0]!.parentHash : genomeHash, ...chain.map((l) => l.childHash)];
  const steps = store.searchSteps(runId, line).filter((s) => s.kind === 'propose' || s.kind === 'submit');
  return line.map((hash, i) => {
    // Its first proposal is how it came to be (the lineage names it for every child).
    const own = steps.filter((s) => s.genomeHash === hash);
    const born = i > 0 ? own.find((s) => s.evaluationId === chain[i - 1]!.evaluationId) ?? own[0] : own[0];
    const lines = born ? (born.kind === 'submit' ? ['A user submitted it.'] : telling(born).map(explain)) : [];
    if (i === line.length - 1) for (const s of own) if (s !== born) lines.push(...s.decisions.filter((d) => d.kind === 'promotion' || d.kind === 'reference-promotion').map(explain));
    return { genomeHash: hash, evaluationId: born?.evaluationId ?? null, lines };
  });
}
