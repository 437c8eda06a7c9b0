import { GenomeSchema, type Genome, type LayerNode, type TrainingGenes } from './genome-schema.js';
import { dilationsOf, IMAGE_KINDS, maxRepeatsOf, SEQUENCE_KINDS, SPATIAL_KINDS, type SearchSpace } from './search-space-schema.js';
import { analyzeGenome, type DataShape, type GenomeAnalysis, type GenomeIssue } from './analyze.js';
import { expandedLayerCount } from './motifs.js';
import { createValidator } from '../validation.js';

export const genomeValidator = createValidator('genome', GenomeSchema);

export type GenomeCheck = { ok: true; genome: Genome; analysis: GenomeAnalysis } | { ok: false; issues: GenomeIssue[] };

const inRange = (v: number, r: { min: number; max: number }) => v >= r.min && v <= r.max;

/** Rules of the search space that concern one node's settings. */
function nodeIssues(n: LayerNode, space: SearchSpace): string[] {
  const out: string[] = [];
  if (!space.allowedKinds.includes(n.kind)) out.push(`layer kind '${n.kind}' is not allowed in this search space`);
  // 'linear' (no activation) is always allowed: it is how a weight layer hands its output to a
  // batch norm followed by an activation node, the usual block of hand-made networks.
  if ('activation' in n && n.activation !== 'linear' && !space.activations.includes(n.activation)) out.push(`activation '${n.activation}' is not allowed`);
  switch (n.kind) {
    case 'dense':
    case 'lstm':
    case 'gru':
      if (!inRange(n.units, space.units)) out.push(`units ${n.units} outside [${space.units.min}, ${space.units.max}]`);
      break;
    case 'conv1d':
      if (!dilationsOf(space).includes(n.dilation)) out.push(`dilation ${n.dilation} not in [${dilationsOf(space).join(', ')}]`);
    // falls through: a conv1d has a conv2d's filters, kernel and stride rules
    case 'conv2d':
      if (!inRange(n.filters, space.filters)) out.push(`filters ${n.filters} outside [${space.filters.min}, ${space.filters.max}]`);
    // falls through: both convolutions share kernel and stride rules
    case 'depthwise-conv2d':
      if (!space.kernelSizes.includes(n.kernelSize)) out.push(`kernel size ${n.kernelSize} not in [${space.kernelSizes.join(', ')}]`);
      if (!space.strides.includes(n.strides)) out.push(`stride ${n.strides} not in [${space.strides.join(', ')}]`);
      break;
    case 'max-pool2d':
    case 'avg-pool2d':
    case 'max-pool1d':
    case 'avg-pool1d':
      if (!space.poolSizes.includes(n.poolSize)) out.push(`pool size ${n.poolSize} not in [${space.poolSizes.join(', ')}]`);
      if (!space.strides.includes(n.strides)) out.push(`stride ${n.strides} not in [${space.strides.join(', ')}]`);
      break;
    case 'dropout':
      if (!inRange(n.rate, space.dropoutRate)) out.push(`dropout rate ${n.rate} outside [${space.dropoutRate.min}, ${space.dropoutRate.max}]`);
      break;
    case 'repeat':
      if (n.times > maxRepeatsOf(space)) out.push(`times ${n.times} is above the search space's maxRepeats ${maxRepeatsOf(space)}; lower times or raise maxRepeats`);
      break;
    default:
      break;
  }
  return out;
}

/**
 * Full check of an untrusted genome: its schema, its graph (no cycles, no dangling inputs, shapes
 * that fit), and the search space's rules and caps. Every problem is reported, each naming the node
 * and what to change.
 */
export function checkGenome(value: unknown, space: SearchSpace, data: DataShape): GenomeCheck {
  const schemaIssues = genomeValidator.issues(value);
  if (schemaIssues.length) return { ok: false, issues: schemaIssues.map((i) => ({ nodeId: null, message: `${i.path || '(root)'} ${i.message}` })) };
  const genome = value as Genome;
  const issues: GenomeIssue[] = [];
  const layers = expandedLayerCount(genome);
  if (layers > space.maxNodes) {
    const counted = genome.motifs ? ' once motifs are expanded (a repeat counts its motif nodes once per application)' : '';
    issues.push({ nodeId: null, message: `${layers} nodes${counted}, more than the search space's ${space.maxNodes}` });
  }
  for (const n of genome.nodes) for (const message of nodeIssues(n, space)) issues.push({ nodeId: n.id, message });
  const motifNodes = (genome.motifs ?? []).flatMap((m) => m.nodes.map((n) => ({ motif: m.id, n })));
  for (const { motif, n } of motifNodes) for (const message of nodeIssues(n, space)) issues.push({ nodeId: n.id, message: `in motif '${motif}': ${message}` });
  const anyOf = (kinds: readonly LayerNode['kind'][]) => [...genome.nodes, ...motifNodes.map(({ n }) => n)].some((n) => kinds.includes(n.kind));
  const rank = data.inputShape.length;
  if (rank === 1 && anyOf(SPATIAL_KINDS)) issues.push({ nodeId: null, message: 'this dataset has flat samples, so spatial layers (conv, pool, flatten) cannot be used' });
  if (rank === 2 && anyOf(IMAGE_KINDS)) issues.push({ nodeId: null, message: 'this dataset has sequence samples (time steps × channels), so image layers (conv2d, depthwise-conv2d, 2-D pools) cannot be used; use conv1d and 1-D pools' });
  if (rank === 3 && anyOf(SEQUENCE_KINDS)) issues.push({ nodeId: null, message: 'this dataset has image samples, so sequence layers (conv1d, 1-D pools, lstm, gru) cannot be used' });
  const t = genome.training;
  if (!space.optimizers.includes(t.optimizer)) issues.push({ nodeId: null, message: `optimizer '${t.optimizer}' is not allowed` });
  if (!inRange(t.learningRate, space.learningRate)) issues.push({ nodeId: null, message: `learning rate ${t.learningRate} outside [${space.learningRate.min}, ${space.learningRate.max}]` });
  if (!space.batchSizes.includes(t.batchSize)) issues.push({ nodeId: null, message: `batch size ${t.batchSize} not in [${space.batchSizes.join(', ')}]` });
  if (!inRange(t.weightDecay, space.weightDecay)) issues.push({ nodeId: null, message: `weight decay ${t.weightDecay} outside [${space.weightDecay.min}, ${space.weightDecay.max}]` });
  if (!inRange(t.epochs, space.epochs)) issues.push({ nodeId: null, message: `epochs ${t.epochs} outside [${space.epochs.min}, ${space.epochs.max}]` });
  for (const message of recipeIssues(t, space, data)) issues.push({ nodeId: null, message });
  if (issues.length) return { ok: false, issues };

  const result = analyzeGenome(genome, data);
  if (!result.ok) return result;
  const { params, flops } = result.analysis;
  if (params > space.maxParams) issues.push({ nodeId: null, message: `${params} parameters, above the cap of ${space.maxParams}; use fewer units or filters, or pool earlier` });
  if (flops > space.maxFlops) issues.push({ nodeId: null, message: `${flops} FLOPs per sample, above the cap of ${space.maxFlops}; use fewer filters or stride/pool earlier` });
  if (issues.length) return { ok: false, issues };
  return { ok: true, genome, analysis: result.analysis };
}

/** Formats issues as one line each, for errors and logs. */
export function formatGenomeIssues(issues: GenomeIssue[]): string {
  return issues.map((i) => (i.nodeId ? `node '${i.nodeId}': ${i.message}` : i.message)).join('\n');
}

/** Rules of the search space and the data for the training recipe genes (schedule, augmentation, smoothing, patience). */
function recipeIssues(t: TrainingGenes, space: SearchSpace, data: DataShape): string[] {
  const out: string[] = [];
  const schedules = space.schedules ?? ['constant'];
  if (t.schedule && !schedules.includes(t.schedule.kind)) out.push(`learning-rate schedule '${t.schedule.kind}' is not allowed (the space allows ${schedules.join(', ')})`);
  if (t.schedule?.kind === 'step' && t.schedule.atFractions.some((f, i, all) => i > 0 && f <= all[i - 1]!)) {
    out.push('step schedule atFractions must be ascending, e.g. [0.5, 0.75]');
  }
  if (t.augment && (t.augment.shift > 0 || t.augment.flip)) {
    if (data.inputShape.length !== 3) out.push('augment needs images (height × width × channels); this dataset has flat samples, so drop the augment gene');
    const shift = space.shift ?? { min: 0, max: 0 };
    if (!inRange(t.augment.shift, shift)) out.push(`augment shift ${t.augment.shift} outside [${shift.min}, ${shift.max}]`);
    if (t.augment.flip && !space.flips) out.push('augment.flip mirrors images, but the run file does not say mirroring keeps the label: set searchSpace.flips to true, or drop the flip');
  }
  if (t.labelSmoothing) {
    const r = space.labelSmoothing ?? { min: 0, max: 0 };
    if (!inRange(t.labelSmoothing, r)) out.push(`label smoothing ${t.labelSmoothing} outside [${r.min}, ${r.max}]`);
  }
  if (t.patience !== undefined && !(space.patience && inRange(t.patience, space.patience))) {
    out.push(space.patience ? `patience ${t.patience} outside [${space.patience.min}, ${space.patience.max}]` : 'early stopping (patience) is not allowed: the search space sets no patience range');
  }
  return out;
}

/**
 * What a search space asks that the run's data cannot give, each as a sentence naming the field
 * and the fix (checked when a run starts, before anything is stored).
 */
export function spaceIssuesForData(space: SearchSpace, data: DataShape): string[] {
  const out: string[] = [];
  if (space.flips && data.inputShape.length !== 3) {
    out.push(`searchSpace.flips asks for left-right mirrored training images, but this dataset's samples are flat (shape [${data.inputShape.join(', ')}], no width axis): remove searchSpace.flips`);
  }
  return out;
}
