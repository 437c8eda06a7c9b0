import { SEARCH_DECISION_VERSION, type SearchAlgorithmName, type SearchDecision } from '@netbreeder/shared-types';
import { createSearchAlgorithm, type Observation, type SearchAlgorithm, type SearchContext } from './search-algorithm.js';
import type { SearchSettings } from './search-settings.js';

/** One recorded call of the algorithm, as the decision log holds it; `skip` steps (a user's genome, a refusal) asked it nothing. */
export type RecordedCall =
  | { step: number; kind: 'propose'; genomeHash: string; parentHashes: string[]; budgetEpochs: number | null; decisionsJson: string }
  | { step: number; kind: 'observe'; observation: Observation; decisionsJson: string }
  | { step: number; kind: 'forget'; evaluationIds: string[]; reason: string; decisionsJson: string }
  | { step: number; kind: 'skip' };

export interface ReplayInput {
  algorithm: SearchAlgorithmName;
  settings: SearchSettings;
  context: SearchContext;
  /** The run's recorded steps in their recorded order. */
  calls: readonly RecordedCall[];
  /** The algorithm's snapshot as last stored; replay's own must equal it. Absent: not compared. */
  storedSnapshot?: unknown;
}

/**
 * Takes the members `drop` names out of the algorithm (`forget`) and returns the decision that
 * records it: the evaluation ids it let go, in order. The coordinator and replay both go through
 * here, so a quarantine replays exactly.
 */
export function forgetResults(alg: SearchAlgorithm, drop: (evaluationId: string) => boolean, reason: string): SearchDecision {
  const gone = new Set<string>();
  alg.forget?.((id) => {
    const out = drop(id);
    if (out) gone.add(id);
    return out;
  });
  return { kind: 'results-forgotten', version: SEARCH_DECISION_VERSION, reason, evaluationIds: [...gone] };
}

/** Where replay first went another way than the record. */
export interface ReplayDisagreement {
  step: number;
  what: 'genome' | 'parents' | 'budget' | 'decisions' | 'snapshot' | 'error';
  recorded: string;
  replayed: string;
}

export interface ReplayReport {
  agree: boolean;
  proposals: number;
  observations: number;
  /** Steps the algorithm was not asked about (user genomes, refusals). */
  skipped: number;
  decisions: number;
  /** The first disagreement; replay stops there. Null when everything agreed. */
  disagreement: ReplayDisagreement | null;
}

const brief = (v: unknown) => {
  const text = typeof v === 'string' ? v : JSON.stringify(v) ?? 'undefined';
  return text.length > 600 ? `${text.slice(0, 600)}…` : text;
};

/**
 * Replays a run's search: creates the algorithm afresh from the run's settings and seed, makes the
 * same calls in the recorded order (feeding each stored result to `observe`), and checks that every
 * proposal (genome, parents, budget) and every decision list comes out exactly as recorded, then
 * that the final state equals the stored snapshot. Pure: no I/O, no clock.
 */
export function replaySearch(input: ReplayInput): ReplayReport {
  const report: ReplayReport = { agree: true, proposals: 0, observations: 0, skipped: 0, decisions: 0, disagreement: null };
  const differ = (step: number, what: ReplayDisagreement['what'], recorded: unknown, replayed: unknown): ReplayReport => ({
    ...report,
    agree: false,
    disagreement: { step, what, recorded: brief(recorded), replayed: brief(replayed) },
  });
  let alg: SearchAlgorithm;
  try {
    alg = createSearchAlgorithm(input.algorithm, input.settings, input.context);
  } catch (err) {
    return differ(-1, 'error', 'an algorithm made from the run settings', (err as Error).message);
  }
  for (const call of input.calls) {
    if (call.kind === 'skip') {
      report.skipped++;
      continue;
    }
    let decisions: SearchDecision[];
    try {
      if (call.kind === 'propose') {
        const p = alg.propose();
        if (p.genomeHash !== call.genomeHash) return differ(call.step, 'genome', call.genomeHash, p.genomeHash);
        if (JSON.stringify(p.parentHashes) !== JSON.stringify(call.parentHashes)) return differ(call.step, 'parents', call.parentHashes, p.parentHashes);
        if ((p.budgetEpochs ?? null) !== call.budgetEpochs) return differ(call.step, 'budget', call.budgetEpochs, p.budgetEpochs ?? null);
        decisions = p.decisions ?? [];
        report.proposals++;
      } else if (call.kind === 'forget') {
        const named = new Set(call.evaluationIds);
        decisions = [forgetResults(alg, (id) => named.has(id), call.reason)];
      } else {
        decisions = alg.observe(call.observation);
        report.observations++;
      }
    } catch (err) {
      return differ(call.step, 'error', `the recorded ${call.kind}`, (err as Error).message);
    }
    const replayed = JSON.stringify(decisions);
    if (replayed !== call.decisionsJson) return differ(call.step, 'decisions', call.decisionsJson, replayed);
    report.decisions += decisions.length;
  }
  if (input.storedSnapshot !== undefined) {
    const mine = JSON.stringify(alg.snapshot());
    const stored = JSON.stringify(input.storedSnapshot);
    if (mine !== stored) return differ(input.calls.at(-1)?.step ?? -1, 'snapshot', stored, mine);
  }
  return report;
}
