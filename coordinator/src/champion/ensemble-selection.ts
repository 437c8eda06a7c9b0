import { InternalError, expandMotifs, type Genome, type LayerNode } from '@netbreeder/shared-types';

/**
 * Choosing the members of an averaging ensemble: accurate AND different from each other, since
 * averaging near-copies of one network gains little. Pure; no I/O.
 *
 * The rule (greedy): the most accurate candidate first; then, while the ensemble is short, the
 * candidate with the highest `accuracy - penalty * maxSimilarity`, where maxSimilarity is its
 * largest {@link architectureSimilarity} to a member already chosen. Ties go to the candidate
 * listed first (callers list them best first). Prediction disagreement on validation would be a
 * finer measure, but search results carry no per-sample predictions, so similarity is read from
 * the genomes.
 */

/** Width in powers of two (8 and 12 units fall together, 8 and 32 do not). */
const bucket = (n: number) => Math.round(Math.log2(Math.max(1, n)));

/** One token per built layer naming its kind and its main sizes, plus the optimizer: the multiset that architectures are compared by. */
export function architectureTokens(genome: Genome): string[] {
  const token = (n: LayerNode): string => {
    switch (n.kind) {
      case 'dense':
        return `dense/w${bucket(n.units)}/${n.activation}`;
      case 'conv2d':
        return `conv2d/k${n.kernelSize}/s${n.strides}/w${bucket(n.filters)}/${n.activation}`;
      case 'depthwise-conv2d':
        return `depthwise-conv2d/k${n.kernelSize}/s${n.strides}/m${n.depthMultiplier}`;
      case 'conv1d':
        return `conv1d/k${n.kernelSize}/s${n.strides}/d${n.dilation}/w${bucket(n.filters)}/${n.activation}`;
      case 'lstm':
      case 'gru':
        return `${n.kind}/w${bucket(n.units)}/${n.returnSequences ? 'seq' : 'last'}`;
      case 'max-pool2d':
      case 'avg-pool2d':
      case 'max-pool1d':
      case 'avg-pool1d':
        return `${n.kind}/p${n.poolSize}`;
      case 'activation':
        return `activation/${n.activation}`;
      default:
        return n.kind;
    }
  };
  // A repeat counts as the layers it builds, so a motif applied twice and the same layers written out compare equal.
  return [...expandMotifs(genome).genome.nodes.map(token), `optimizer/${genome.training.optimizer}`];
}

/** Multiset Jaccard similarity of two genomes' {@link architectureTokens}: 1 for equal token counts, 0 for nothing in common. */
export function architectureSimilarity(a: Genome, b: Genome): number {
  const count = (tokens: string[]) => tokens.reduce((m, t) => m.set(t, (m.get(t) ?? 0) + 1), new Map<string, number>());
  const ca = count(architectureTokens(a));
  const cb = count(architectureTokens(b));
  let shared = 0;
  let total = 0;
  for (const t of new Set([...ca.keys(), ...cb.keys()])) {
    shared += Math.min(ca.get(t) ?? 0, cb.get(t) ?? 0);
    total += Math.max(ca.get(t) ?? 0, cb.get(t) ?? 0);
  }
  return total === 0 ? 1 : shared / total;
}

export interface EnsembleCandidate {
  /** Whatever identifies it to the caller (a search evaluation id). */
  id: string;
  genomeHash: string;
  genome: Genome;
  /** Validation accuracy in the search. */
  accuracy: number;
}

export interface EnsemblePick extends EnsembleCandidate {
  /** accuracy - penalty * similarity when it was chosen (its plain accuracy for the first). */
  score: number;
  /** Its largest similarity to a member chosen before it (0 for the first). */
  similarity: number;
  /** The member it is most similar to (null for the first). */
  nearestHash: string | null;
}

/**
 * Picks up to `size` distinct genomes by the greedy rule above. Candidates with the same genome
 * hash count once (the first listed). Throws on a size below 1 or a negative penalty.
 */
export function selectEnsemble(candidates: readonly EnsembleCandidate[], size: number, penalty: number): EnsemblePick[] {
  if (!Number.isInteger(size) || size < 1) throw new InternalError(`ensemble size must be a whole number ≥ 1, got ${size}`);
  if (!(penalty >= 0)) throw new InternalError(`diversity penalty must be ≥ 0, got ${penalty}`);
  const seen = new Set<string>();
  const pool = candidates.filter((c) => !seen.has(c.genomeHash) && seen.add(c.genomeHash));
  const chosen: EnsemblePick[] = [];
  while (chosen.length < size && pool.length) {
    let best = -1;
    let bestPick: EnsemblePick | null = null;
    pool.forEach((c, i) => {
      let similarity = 0;
      let nearestHash: string | null = null;
      for (const m of chosen) {
        const s = architectureSimilarity(c.genome, m.genome);
        if (nearestHash === null || s > similarity) [similarity, nearestHash] = [s, m.genomeHash];
      }
      const score = c.accuracy - penalty * similarity;
      if (!bestPick || score > bestPick.score) [best, bestPick] = [i, { ...c, score, similarity, nearestHash }];
    });
    chosen.push(bestPick!);
    pool.splice(best, 1);
  }
  return chosen;
}
