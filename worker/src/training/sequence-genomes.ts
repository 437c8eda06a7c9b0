import type { Genome, LayerNode } from '@netbreeder/shared-types';
import { chainGenome } from './reference-genomes.js';

/**
 * Small genomes for sequence samples (time steps × channels) that the engine's tests share: one per
 * recurrent kind, a 1-D convolution stack, and a graph with a skip connection and a motif.
 */

/** lstm (whole sequence) → lstm (last step) → dense. */
export const lstmGenome = (units = 16): Genome =>
  chainGenome([
    { id: 'l1', kind: 'lstm', units, returnSequences: true },
    { id: 'l2', kind: 'lstm', units, returnSequences: false },
    { id: 'd', kind: 'dense', units: 8, activation: 'relu' },
  ], { learningRate: 0.01, batchSize: 32 });

/** gru (last step) with dropout before the head. */
export const gruGenome = (units = 16): Genome =>
  chainGenome([
    { id: 'g1', kind: 'gru', units, returnSequences: false },
    { id: 'drop', kind: 'dropout', rate: 0.1 },
  ], { learningRate: 0.01, batchSize: 32 });

/** conv1d (same, dilated) → batch norm → relu → max pool → conv1d (valid, strided) → global average pool. */
export const conv1dGenome = (): Genome =>
  chainGenome([
    { id: 'c1', kind: 'conv1d', filters: 8, kernelSize: 3, strides: 1, dilation: 1, padding: 'same', activation: 'linear' },
    { id: 'bn', kind: 'batch-norm' },
    { id: 'r', kind: 'activation', activation: 'relu' },
    { id: 'p', kind: 'max-pool1d', poolSize: 2, strides: 2 },
    { id: 'c2', kind: 'conv1d', filters: 12, kernelSize: 5, strides: 2, dilation: 1, padding: 'valid', activation: 'tanh' },
    { id: 'g', kind: 'global-avg-pool' },
  ], { learningRate: 0.01, batchSize: 32 });

/** A skip connection over a conv1d, a concat with a gru's sequence, an average pool, a global max pool, and a repeated motif. */
export function sequenceGraphGenome(): Genome {
  const nodes: LayerNode[] = [
    { id: 'c1', kind: 'conv1d', inputs: ['input'], filters: 6, kernelSize: 3, strides: 1, dilation: 2, padding: 'same', activation: 'relu' },
    { id: 'c2', kind: 'conv1d', inputs: ['c1'], filters: 6, kernelSize: 5, strides: 1, dilation: 1, padding: 'same', activation: 'elu' },
    { id: 'sum', kind: 'add', inputs: ['c1', 'c2'] },
    { id: 'gr', kind: 'gru', inputs: ['sum'], units: 5, returnSequences: true },
    { id: 'cat', kind: 'concat', inputs: ['sum', 'gr'] },
    { id: 'ap', kind: 'avg-pool1d', inputs: ['cat'], poolSize: 3, strides: 1 },
    { id: 'rep', kind: 'repeat', inputs: ['ap'], motif: 'cell', times: 2 },
    { id: 'gmp', kind: 'global-max-pool', inputs: ['rep'] },
  ];
  const motif: LayerNode[] = [
    { id: 'mc', kind: 'conv1d', inputs: ['input'], filters: 7, kernelSize: 3, strides: 1, dilation: 1, padding: 'same', activation: 'linear' },
    { id: 'mb', kind: 'batch-norm', inputs: ['mc'] },
  ];
  return { ...chainGenome([]), nodes, output: 'gmp', motifs: [{ id: 'cell', nodes: motif, output: 'mb' }] };
}
