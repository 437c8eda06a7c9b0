import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadDataset, readRunConfigFile } from '@netbreeder/coordinator';

/** The example run files under examples/ (invented data made by examples/make-example-data.ts) load as documented. */
const examples = join(import.meta.dirname, '..', '..', 'examples');

describe('example run files for one\'s own data', () => {
  it.each([
    ['kiln-run.json', [11], ['bloated', 'crazed', 'sound', 'underfired']],
    ['glaze-crops-run.json', [16, 16, 3], ['crawled', 'glossy', 'pinholed']],
    ['shelf-heat-run.json', [8, 8, 1], ['even', 'hot-front', 'hot-back']],
    // The longest training firing (63 readings) sets the length: [time steps, channels].
    ['kiln-curves-run.json', [63, 2], ['cracked', 'good', 'underfired']],
  ])('%s loads with its paths relative to the run file', async (file, shape, classes) => {
    const { dataset, preparation } = await loadDataset(await readRunConfigFile(join(examples, file)));
    expect(dataset.inputShape).toEqual(shape);
    expect(dataset.classNames).toEqual(classes);
    expect(preparation.warnings).toEqual([]);
  });

  it('kiln-shrinkage-run.json loads as a regression table, its shrinkage standardised with the training split\'s scaling', async () => {
    const config = await readRunConfigFile(join(examples, 'kiln-shrinkage-run.json'));
    const { dataset, preparation } = await loadDataset(config);
    // 5 numeric columns + kiln (3) + clay body (3) one-hot.
    expect(dataset.inputShape).toEqual([11]);
    expect(dataset.target!.column).toBe('shrinkage_pct');
    expect(preparation.preprocessing.kind === 'table' && preparation.preprocessing.target).toEqual(dataset.target);
    expect(dataset.train.targets!.length + dataset.val.targets!.length + dataset.test.targets!.length).toBe(500);
    expect(preparation.warnings).toEqual([]);
    expect(dataset.target!.loss).toBeUndefined();
    // The Huber loss travels with the target's scaling, to the workers.
    const huber = await loadDataset({ ...config, dataset: { ...config.dataset, regressionLoss: 'huber' } as typeof config.dataset });
    expect(huber.dataset.target!.loss).toBe('huber');
    // The same file without a task is refused with the suggestion, before anything is stored.
    const { task: _task, ...untasked } = config.dataset as typeof config.dataset & { task?: string };
    await expect(loadDataset({ ...config, dataset: untasked })).rejects.toThrow(/distinct numbers: to predict the number, set "task": "regression"/);
  });
});
