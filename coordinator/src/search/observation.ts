import type { Observation } from './search-algorithm.js';
import type { Variation } from './variation.js';
import { InternalError } from '@netbreeder/shared-types';

/**
 * Throws when an observation is malformed: no evaluation id, a fitness that is not a finite number,
 * or a genome whose hash is not the one given (which would corrupt the lineage).
 */
export function assertObservation<G>(o: Observation<G>, variation: Variation<G>): void {
  if (typeof o.evaluationId !== 'string' || !o.evaluationId) throw new InternalError('observation needs the evaluation id (the job id) as a non-empty string');
  if (typeof o.fitness !== 'number' || !Number.isFinite(o.fitness)) {
    throw new InternalError(`observation ${o.evaluationId}: fitness must be a finite number (validation accuracy), got ${String(o.fitness)}`);
  }
  if (!variation.isGenome(o.genome)) throw new InternalError(`observation ${o.evaluationId}: genome does not match the genome schema`);
  if (variation.hasHash ? !variation.hasHash(o.genome, o.genomeHash) : variation.hash(o.genome) !== o.genomeHash) {
    const actual = variation.hash(o.genome);
    throw new InternalError(`observation ${o.evaluationId}: genomeHash ${o.genomeHash} is not the genome's hash ${actual}; pass the hash of the genome that was trained`);
  }
}
