import { describe, expect, it } from 'vitest';
import { createRandom } from '@netbreeder/shared-types';
import { datasetErrorOf } from './test-fixtures.js';
import { sequenceFeatures, shapeSequences } from '../datasets/sequence-samples.js';
import { parseSequencesCsv } from './sequences-csv.js';

const options = { delimiter: ',', idColumn: 'run', timeColumn: 'minute', channels: ['temp', 'draft'], labelColumn: 'outcome' };
const settings = { ...options, path: 'runs.csv' };
const fractions = { validation: 0.2, test: 0.2 };

/** Seeded samples of 8 to 14 steps, rows shuffled; class "high" when the first temp is above 0. */
function longCsv(samples: number, seed = 2): string {
  const r = createRandom(`sequences ${seed}`);
  const rows: string[] = [];
  for (let s = 0; s < samples; s++) {
    const steps = 8 + Math.floor(r.next() * 7);
    const level = r.next() * 2 - 1;
    for (let t = 0; t < steps; t++) rows.push(`s${s},${t * 5},${(level + r.next() * 0.1).toFixed(4)},${r.next().toFixed(3)},${level > 0 ? 'high' : 'low'}`);
  }
  return ['run,minute,temp,draft,outcome', ...r.shuffled(rows)].join('\n');
}

const fails = datasetErrorOf;

describe('labelled sequences from one long-format CSV', () => {
  it('groups rows by sample, orders each by time, and splits whole samples stratified by class', () => {
    const samples = parseSequencesCsv(longCsv(40), 'runs.csv', options);
    expect(samples).toHaveLength(40);
    const s0 = parseSequencesCsv('run,minute,temp,draft,outcome\na,10,3,0,x\nb,0,9,9,y\na,0,1,0,x\na,5,2,0,x\n', 'runs.csv', options)[0]!;
    expect(Array.from(s0.values)).toEqual([1, 0, 2, 0, 3, 0]);
    const { dataset, preprocessing, warnings } = shapeSequences(samples, settings, fractions, 1);
    expect(dataset.train.count + dataset.val.count + dataset.test.count).toBe(40);
    // Absent length: the training split's longest sample, so only validation or test samples can be cut.
    expect(preprocessing.lengthFrom).toBe('training-longest');
    expect(dataset.inputShape).toEqual([preprocessing.length, 2]);
    expect(preprocessing.cut + preprocessing.padded).toBeLessThanOrEqual(40);
    expect(warnings.length).toBe(preprocessing.cut ? 1 : 0);
    for (const part of [dataset.val, dataset.test]) expect(new Set(part.labels).size).toBe(2);
  });

  it('cuts to the run file length with a warning naming the count, pads the short ones with the training mean (0)', () => {
    const samples = parseSequencesCsv(longCsv(40), 'runs.csv', options);
    const longer = samples.filter((s) => s.steps > 10).length;
    const { dataset, preprocessing, warnings } = shapeSequences(samples, { ...settings, length: 10 }, fractions, 1);
    expect(dataset.inputShape).toEqual([10, 2]);
    expect(preprocessing.cut).toBe(longer);
    expect(warnings[0]!.message).toMatch(new RegExp(`^${longer} of 40 samples are longer than 10 steps \\(the run file's length\\) and were cut`));
    // A sample of 8 steps ends in 2 steps of zeros (the training mean, standardised).
    const short = samples.findIndex((s) => s.steps === 8);
    const one = sequenceFeatures(samples, [short], preprocessing.channels, 10);
    expect(Array.from(one.subarray(16))).toEqual([0, 0, 0, 0]);
    expect(one[0]).toBeCloseTo((samples[short]!.values[0]! - preprocessing.channels[0]!.mean) / preprocessing.channels[0]!.std, 5);
  });

  it('refuses a sample whose label changes, a repeated time, a word in a channel, naming line and fix', () => {
    const head = 'run,minute,temp,draft,outcome\n';
    expect(fails(() => parseSequencesCsv(`${head}a,0,1,0,x\na,5,1,0,y\n`, 'runs.csv', options)).message).toMatch(/line 3: sample "a" has label "y" here but "x" on line 2; a sample has one class/);
    expect(fails(() => parseSequencesCsv(`${head}a,0,1,0,x\na,0,2,0,x\n`, 'runs.csv', options)).message).toMatch(/line 3: sample "a" has time 0 also on line 2/);
    expect(fails(() => parseSequencesCsv(`${head}a,0,hot,0,x\n`, 'runs.csv', options)).where).toEqual({ file: 'runs.csv', line: 2, field: 'temp' });
    expect(fails(() => parseSequencesCsv(`${head}a,0,1,0\n`, 'runs.csv', options)).message).toMatch(/line 2 has 4 fields, the header has 5/);
  });
});
