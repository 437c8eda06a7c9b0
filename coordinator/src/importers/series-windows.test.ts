import { describe, expect, it } from 'vitest';
import { createRandom } from '@netbreeder/shared-types';
import { datasetErrorOf } from './test-fixtures.js';
import { timeParts, windowSeries, windowStarts, type WindowSettings } from '../datasets/series-windows.js';
import { parseSeriesCsv } from './series-csv.js';

const fractions = { validation: 0.2, test: 0.2 };

/** A seeded series of `steps` rows: temp drifts, fan is noise, state is "hot" above 0. */
function seriesCsv(steps: number, seed = 5): string {
  const r = createRandom(`series ${seed}`);
  const lines = ['step,temp,fan,state'];
  let temp = 0;
  for (let t = 0; t < steps; t++) {
    temp += r.next() - 0.5;
    lines.push(`${t},${temp.toFixed(4)},${(r.next() * 10).toFixed(3)},${temp > 0 ? 'hot' : 'cold'}`);
  }
  return `${lines.join('\n')}\n`;
}

const read = (text: string, task: 'classification' | 'regression' = 'classification', column = task === 'regression' ? 'temp' : 'state') =>
  parseSeriesCsv(text, 'series.csv', { delimiter: ',', channels: ['temp', 'fan'], target: { column, task } });

const fails = datasetErrorOf;

const classify: WindowSettings = { window: 8, stride: 2, task: 'classification', horizon: 1 };
const forecast: WindowSettings = { window: 8, stride: 1, task: 'regression', horizon: 3 };

describe('windows cut from one series, split by time', () => {
  it('no window straddles a part boundary, and every part lies after the one before it', () => {
    for (const s of [classify, forecast]) {
      const parts = timeParts(200, fractions);
      expect(parts).toEqual({ valStart: 120, testStart: 160, steps: 200 });
      const starts = windowStarts(parts, s);
      const reach = s.window - 1 + (s.task === 'regression' ? s.horizon : 0);
      expect(Math.max(...starts.train) + reach).toBeLessThan(parts.valStart);
      expect(Math.min(...starts.val)).toBeGreaterThanOrEqual(parts.valStart);
      expect(Math.max(...starts.val) + reach).toBeLessThan(parts.testStart);
      expect(Math.min(...starts.test)).toBeGreaterThanOrEqual(parts.testStart);
      expect(Math.max(...starts.test) + reach).toBeLessThan(parts.steps);
      for (const list of Object.values(starts)) for (const start of list) expect(start % s.stride).toBe(0);
    }
  });

  it('standardises the channels on the training part only and lays each window out [window, channels]', () => {
    const series = read(seriesCsv(200));
    const { dataset, preprocessing } = windowSeries(series, classify, fractions);
    expect(dataset.inputShape).toEqual([8, 2]);
    expect(preprocessing.steps).toEqual({ train: 120, val: 40, test: 40 });
    const temp = Array.from(series.values[0]!.subarray(0, 120));
    const mean = temp.reduce((a, b) => a + b, 0) / temp.length;
    expect(preprocessing.channels[0]!.mean).toBeCloseTo(mean, 12);
    // The first training window starts at step 0: its value at step 3, channel 1 (fan).
    const fan = preprocessing.channels[1]!;
    expect(dataset.train.features[3 * 2 + 1]).toBeCloseTo((series.values[1]![3]! - fan.mean) / fan.std, 5);
    // The class is the state at the window's last step (second training window: steps 2..9).
    expect(dataset.classNames[dataset.train.labels[1]!]).toBe(series.target && 'labels' in series.target ? series.target.labels[9] : null);
    expect(dataset.train.count + dataset.val.count + dataset.test.count).toBe(
      Object.values(windowStarts(timeParts(200, fractions), classify)).reduce((n, l) => n + l.length, 0),
    );
  });

  it('regression reads the number horizon steps after the window, standardised on the training windows', () => {
    const series = read(seriesCsv(200), 'regression');
    const { dataset } = windowSeries(series, forecast, fractions);
    const target = dataset.target!;
    expect(target.column).toBe('temp');
    // First test window starts at step 160: its target is temp at step 160 + 7 + 3.
    const t = dataset.test.targets![0]! * target.std + target.mean;
    expect(t).toBeCloseTo(series.values[0]![170]!, 4);
    const train = Array.from(dataset.train.targets!);
    expect(train.reduce((a, b) => a + b, 0) / train.length).toBeCloseTo(0, 5);
  });
});

describe('series input refused before anything is stored, naming file, line and fix', () => {
  it('a ragged row', () => {
    const e = fails(() => read('temp,fan,state\n1,2,hot\n1,2\n'));
    expect(e.message).toMatch(/series\.csv: line 3 has 2 fields, the header has 3/);
  });
  it('a non-numeric channel cell', () => {
    const e = fails(() => read('temp,fan,state\n1,2,hot\n1,warm,cold\n'));
    expect(e.message).toMatch(/line 3: channel column "fan" holds "warm", not a number/);
    expect(e.where).toEqual({ file: 'series.csv', line: 3, field: 'fan' });
  });
  it('a channel missing from the header', () => {
    const e = fails(() => parseSeriesCsv('temp,state\n1,hot\n', 'series.csv', { delimiter: ',', channels: ['temp', 'fan'], target: null }));
    expect(e.message).toMatch(/channels names column "fan", which is not in the header/);
  });
  it('a window longer than the series', () => {
    const e = fails(() => windowSeries(read(seriesCsv(6)), classify, fractions));
    expect(e.message).toMatch(/window is 8 steps but the series has only 6; choose a window of at most 6/);
  });
  it('a horizon that leaves no target', () => {
    const e = fails(() => windowSeries(read(seriesCsv(10), 'regression'), forecast, fractions));
    expect(e.message).toMatch(/needs 11 steps, the series has 10, so no window has a target; lower horizon or window/);
  });
  it('a series too short for one window in each part', () => {
    const e = fails(() => windowSeries(read(seriesCsv(30)), classify, fractions));
    expect(e.message).toMatch(/the validation part of the series \(6 of 30 steps, split by time\) holds no whole window of 8 steps/);
  });
});
