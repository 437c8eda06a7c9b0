import { createRandom, defaultSearchSpace } from '@netbreeder/shared-types';
import { createSearchAlgorithm } from './coordinator/src/search/index.js';
const space = defaultSearchSpace(); const data = { inputShape: [16, 16, 1], numClasses: 4 };
const alg = createSearchAlgorithm('aging-evolution', { populationSize: 100, sampleSize: 25 }, { space, data, seed: 1 });
const rng = createRandom(5); let n = 0;
const pending: any[] = [];
const t0 = performance.now();
for (let i = 0; i < 20000; i++) {
  pending.push(alg.propose());
  if (pending.length > 50) { const p = pending.shift(); const g = JSON.parse(JSON.stringify(p.genome)); alg.observe({ evaluationId: `e${n++}`, genomeHash: p.genomeHash, genome: g, fitness: rng.next(), budgetEpochs: 2, params: 1, flops: 1, trainSeconds: 1 } as any); }
}
console.log('per propose+observe', ((performance.now() - t0) / 20000 * 1000).toFixed(1), 'us');
