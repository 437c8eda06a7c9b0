import { describe, expect, it } from 'vitest';
import { parseRunConfig } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import { prepareRun } from './prepare-run.js';

const log = createLogger('test', 'error');
// 300 tiles of each of the 4 classes, half of them in the training split by the default split.
const tiles = { kind: 'demo-tiles', samplesPerClass: 300, seed: 3 } as const;

describe('prepareRun', () => {
  it("fills in the rungs of successive halving from the training split's size", async () => {
    const { config, loaded } = await prepareRun(parseRunConfig({ dataset: tiles }), log);
    expect(loaded.dataset.train.count).toBeLessThan(1800);
    const lowest = Math.ceil(1800 / loaded.dataset.train.count);
    expect(config.search).toMatchObject({ minEpochs: lowest, maxEpochs: 9 * lowest });
  });

  it('keeps the rungs a run file sets', async () => {
    const { config } = await prepareRun(parseRunConfig({ dataset: tiles, search: { minEpochs: 1, maxEpochs: 4 } }), log);
    expect(config.search).toMatchObject({ minEpochs: 1, maxEpochs: 4 });
  });
});
