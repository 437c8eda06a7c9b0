import { describe, expect, it } from 'vitest';
import type { SequenceSteps, SeriesSteps } from '@netbreeder/shared-types';
import { windowSeries } from '../datasets/series-windows.js';
import { parseSeriesCsv } from '../importers/series-csv.js';
import { PredictError } from './predict-error.js';
import { sequencesInput, seriesInput } from './series-input.js';

const csv = ['temp,fan,state', ...Array.from({ length: 60 }, (_, t) => `${Math.sin(t / 3).toFixed(4)},${(t % 7) / 2},${t % 10 < 5 ? 'on' : 'off'}`)].join('\n');

describe('predict on a new long-format CSV of sequences', () => {
  it('groups by sample id (the output id) and brings each to the training length', () => {
    const steps: SequenceSteps = {
      kind: 'sequences',
      delimiter: ',',
      idColumn: 'run',
      timeColumn: 'minute',
      channels: [{ name: 'temp', mean: 1, std: 2 }],
      length: 3,
      pad: 'end-with-training-mean',
      truncate: 'keep-first-steps',
      layout: 'time-channels',
    };
    const { ids, features } = sequencesInput('run,minute,temp\nb,1,5\na,0,1\nb,0,3\nb,2,7\nb,3,9\n', 'new.csv', steps);
    expect(ids).toEqual(['b', 'a']);
    expect(Array.from(features)).toEqual([1, 2, 3, 0, 0, 0]);
  });
});

describe('predict on a new CSV of time steps', () => {
  it('cuts every full window with the training scaling, id = the line of its last step, as the importer cut them', () => {
    const series = parseSeriesCsv(csv, 'train.csv', { delimiter: ',', channels: ['temp', 'fan'], target: { column: 'state', task: 'classification' } });
    const { dataset, preprocessing } = windowSeries(series, { window: 6, stride: 1, task: 'classification', horizon: 1 }, { validation: 0.2, test: 0.2 });
    const steps: SeriesSteps = { kind: 'series-windows', delimiter: ',', channels: preprocessing.channels, window: 6, layout: 'time-channels', labelColumn: 'state' };
    // New data: the same steps, columns in another order and without the label.
    const fresh = ['fan,temp', ...csv.split('\n').slice(1).map((row) => row.split(',').slice(0, 2).reverse().join(','))].join('\n');
    const { ids, features } = seriesInput(fresh, 'new.csv', steps);
    expect(ids.length).toBe(60 - 6 + 1);
    expect(ids[0]).toBe('7'); // header on line 1, the first window's last step on line 7
    // Window 0 of prediction is the first training window, value for value.
    expect(Array.from(features.subarray(0, 12))).toEqual(Array.from(dataset.train.features.subarray(0, 12)));
  });

  it('refuses a file shorter than one window and a missing channel, naming the fix', () => {
    const steps: SeriesSteps = { kind: 'series-windows', delimiter: ',', channels: [{ name: 'temp', mean: 0, std: 1 }], window: 6, layout: 'time-channels', labelColumn: 'state' };
    expect(() => seriesInput('temp\n1\n2\n', 'short.csv', steps)).toThrow(/short\.csv has 2 time steps but the model reads windows of 6; give at least 6 rows/);
    const err = (() => {
      try {
        seriesInput('fan\n1\n', 'nochan.csv', steps);
      } catch (e) {
        return e;
      }
    })();
    expect(err).toBeInstanceOf(PredictError);
    expect((err as PredictError).code).toBe('NB_PREDICT_MISSING_COLUMN');
  });
});
