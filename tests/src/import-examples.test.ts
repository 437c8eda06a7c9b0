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
  ])('%s loads with its paths relative to the run file', async (file, shape, classes) => {
    const { dataset, preparation } = await loadDataset(await readRunConfigFile(join(examples, file)));
    expect(dataset.inputShape).toEqual(shape);
    expect(dataset.classNames).toEqual(classes);
    expect(preparation.warnings).toEqual([]);
  });
});
