import { InternalError, analyzeGenome, createRandom, defaultSearchSpace, type DataShape, type Genome, type LayerNode, type Random, type SearchSpace } from '@netbreeder/shared-types';
import type { GenomeContext } from './minimal-genome.js';
import type { Observation, Proposal, SearchAlgorithm } from './search-algorithm.js';

/** Shared fixtures of the search's unit tests (not used by the search itself). */

/** The demo's shape: 16×16 grayscale crops in four classes. */
export const IMAGE: DataShape = { inputShape: [16, 16, 1], numClasses: 4 };
/** A flat table: four features, three classes. */
export const FLAT: DataShape = { inputShape: [4], numClasses: 3 };

export const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };

export const genome = (nodes: LayerNode[], output = nodes.at(-1)?.id ?? 'input', training: Partial<Genome['training']> = {}): Genome => ({
  schemaVersion: 1,
  nodes,
  output,
  training: { ...TRAINING, ...training },
});

export const conv = (id: string, input: string, filters = 8, extra: Partial<LayerNode> = {}): LayerNode =>
  ({ id, kind: 'conv2d', inputs: [input], filters, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu', ...extra }) as LayerNode;

export const dense = (id: string, input: string, units = 16): LayerNode => ({ id, kind: 'dense', inputs: [input], units, activation: 'relu' });

export const ctxFor = (data: DataShape, seed: number | string = 1, space: SearchSpace = defaultSearchSpace()): GenomeContext => ({
  space,
  data,
  rng: createRandom(seed),
});

/**
 * A synthetic objective for exercising the search logic only (not a measured accuracy): it rewards
 * up to four weight layers and a learning rate near 10^-2.5, and is deterministic in the genome.
 */
export function syntheticFitness(g: Genome): number {
  const weightLayers = g.nodes.filter((n) => n.kind === 'conv2d' || n.kind === 'dense').length;
  const lrPenalty = Math.abs(Math.log10(g.training.learningRate) + 2.5);
  return Math.max(0, Math.min(1, 0.4 + 0.1 * Math.min(weightLayers, 4) - 0.1 * lrPenalty));
}

/**
 * Plays a coordinator with several evaluations in flight: each step either asks for a proposal
 * (always while fewer than 3 are pending) or reports one pending proposal, picked at random, with
 * its synthetic fitness, its budget (the proposal's, else the genome's epochs) and its real size
 * from `analyzeGenome`. Its own random source is separate from the algorithm's, and its state
 * lives outside the algorithm, so one driver can carry on with a restored algorithm.
 */
export class Driver {
  readonly proposals: Proposal[] = [];
  readonly observations: Observation[] = [];
  private readonly pending: { proposal: Proposal; index: number }[] = [];
  private readonly rng: Random;

  /** `data`: the shape the genomes are analysed on for the observations' params and FLOPs. */
  constructor(
    seed: number | string = 'driver',
    private readonly data: DataShape = IMAGE,
  ) {
    this.rng = createRandom(seed);
  }

  step(alg: SearchAlgorithm): void {
    if (this.pending.length < 3 || this.rng.chance(0.55)) {
      const proposal = alg.propose();
      this.pending.push({ proposal, index: this.proposals.length });
      this.proposals.push(proposal);
      return;
    }
    const [done] = this.pending.splice(this.rng.int(0, this.pending.length - 1), 1);
    const { proposal, index } = done!;
    const analysis = analyzeGenome(proposal.genome, this.data);
    if (!analysis.ok) throw new InternalError(`the driver got an invalid genome: ${JSON.stringify(analysis.issues)}`);
    const o: Observation = {
      evaluationId: `eval-${index}`,
      genomeHash: proposal.genomeHash,
      genome: proposal.genome,
      fitness: syntheticFitness(proposal.genome),
      budgetEpochs: proposal.budgetEpochs ?? proposal.genome.training.epochs,
      params: analysis.analysis.params,
      flops: analysis.analysis.flops,
    };
    this.observations.push(o);
    alg.observe(o);
  }

  run(alg: SearchAlgorithm, steps: number): this {
    for (let i = 0; i < steps; i++) this.step(alg);
    return this;
  }
}

/** The parts of a proposal that must replay exactly. */
export const proposalKey = (p: Proposal) => ({ genomeHash: p.genomeHash, parentHashes: p.parentHashes, mutation: p.mutation, reason: p.reason, budgetEpochs: p.budgetEpochs });
