import { EVALUATION_JOB_VERSION, analyzeGenome, createRandom, dataShapeOf, describeGenome, headUnits, type DataShape, type EvaluationJob, type GenomeAnalysis } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { Proposal, SearchAlgorithm } from '../search/index.js';
import type { RunRecord, RunStore } from '../store/run-store.js';
import { checkpointPolicy, inheritedWeights } from '../checkpoints/checkpoint-policy.js';
import { proposalStep, rejectStep } from './search-record.js';

/** Derives each search evaluation's training seed from the run's seed and the proposal's position. */
export const evaluationSeed = (runSeed: number, seq: number): number => createRandom(`${runSeed}:search:${seq}`).uint32();

/** `<run>-s<seq>-a<attempt>` for a search evaluation, `<run>-c<seq>-a<attempt>` for a champion training. */
export const evaluationId = (runId: string, seq: number, attempt: number, kind: 'search' | 'champion' = 'search'): string =>
  `${runId}-${kind === 'search' ? 's' : 'c'}${seq}-a${attempt}`;

/**
 * Records a proposal (genome, evaluation, its search step with the decisions, lineage) as
 * evaluation number `run.proposals` of the run and returns its job; the caller is inside a
 * transaction, saves the algorithm's state and queues the job. `step`: `submit` for a user's
 * genome (the algorithm was not asked, so replay does not ask it either).
 */
export function recordProposal(store: RunStore, run: RunRecord, proposal: Proposal, analysis: GenomeAnalysis, now: number, step: 'propose' | 'submit' = 'propose'): EvaluationJob {
  const seq = run.proposals;
  const job: EvaluationJob = {
    schemaVersion: EVALUATION_JOB_VERSION,
    kind: 'search',
    evaluationId: evaluationId(run.id, seq, 1),
    runId: run.id,
    attempt: 1,
    genome: proposal.genome,
    genomeHash: proposal.genomeHash,
    seed: evaluationSeed(run.seed, seq),
    budget: { epochs: proposal.budgetEpochs ?? proposal.genome.training.epochs, maxSeconds: run.config.evaluation.maxSeconds },
    dataset: run.dataset.manifest,
  };
  const policy = checkpointPolicy(run.config);
  if (policy) job.checkpoints = policy;
  const inherit = inheritedWeights(store, run.config, run.id, proposal);
  if (inherit) job.inherit = inherit;
  store.putGenome({
    hash: proposal.genomeHash,
    genome: proposal.genome,
    params: analysis.params,
    flops: analysis.flops,
    summary: describeGenome(proposal.genome, headUnits(dataShapeOf(run.dataset.manifest))),
  });
  store.addEvaluation(job, seq, now, true);
  store.addSearchStep(proposalStep(run.id, step, job.evaluationId, proposal, now));
  for (const parent of proposal.parentHashes) {
    store.addLineage(run.id, {
      evaluationId: job.evaluationId,
      childHash: proposal.genomeHash,
      parentHash: parent,
      operator: proposal.mutation?.operator ?? 'none',
      detail: proposal.mutation?.detail ?? proposal.reason,
    });
  }
  return job;
}

/**
 * Asks the algorithm for up to `count` proposals (fewer once the run's `maxEvaluations` is
 * reached) and records each (see {@link recordProposal}); returns their jobs. `asked` is called
 * for each call of the algorithm, whose state then changed. A genome that does not analyse is a
 * bug in the search, never expected: the refusal is recorded with the call, and nothing is queued.
 */
export function proposeMore(
  o: { store: RunStore; log: Logger; now: number },
  algorithm: SearchAlgorithm,
  run: RunRecord,
  data: DataShape,
  count: number,
  asked: () => void,
): EvaluationJob[] {
  const jobs: EvaluationJob[] = [];
  let current = run;
  for (let n = 0; n < count && current.proposals < run.config.budget.maxEvaluations; n++) {
    const proposal = algorithm.propose();
    asked();
    const analysis = analyzeGenome(proposal.genome, data);
    if (!analysis.ok) {
      const issues = analysis.issues.map((i) => i.message);
      o.store.addSearchStep(proposalStep(run.id, 'propose', null, proposal, o.now));
      o.store.addSearchStep(rejectStep(run.id, 'genome', { evaluationId: null, genomeHash: proposal.genomeHash }, issues, o.now));
      o.log.error({ runId: run.id, genomeHash: proposal.genomeHash, issues }, 'search proposed an invalid genome; refused and recorded');
      continue;
    }
    jobs.push(recordProposal(o.store, current, proposal, analysis.analysis, o.now));
    current = { ...current, proposals: current.proposals + 1 };
  }
  return jobs;
}
