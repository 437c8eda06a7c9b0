import { describe, expect, it } from 'vitest';
import { guessCsvSource, profileCsv } from './csv-guess.js';
import { parseRunConfig } from './run-config.js';
import { csvSourceOf, draftBudget, draftRunFile, guessImageSettings, imageSourceOf, looksGray } from './run-file-draft.js';

const facts = (samples: Array<{ width: number; height: number; gray: boolean }>) => ({ classCounts: [{ name: 'a', count: 5 }], samples });

describe('drafting a run file', () => {
  it('keeps small images at their size and shrinks large ones to a longer side of 32, keeping the aspect', () => {
    expect(guessImageSettings(facts([{ width: 16, height: 12, gray: true }])).imageSize.value).toEqual({ width: 16, height: 12 });
    const large = guessImageSettings(facts([{ width: 640, height: 480, gray: false }, { width: 320, height: 240, gray: false }]));
    expect(large.imageSize.value).toEqual({ width: 32, height: 24 });
    expect(large.imageSize.reason).toContain('differ: 640×480, 320×240');
    expect(large.channels).toMatchObject({ value: 3 });
    expect(guessImageSettings(facts([{ width: 8, height: 8, gray: true }])).channels.value).toBe(1);
    expect(() => guessImageSettings(facts([]))).toThrow(/no image/);
  });

  it('tells gray pixels from coloured ones', () => {
    expect(looksGray(Uint8Array.from([10, 10, 11, 255, 200, 200, 200, 0]))).toBe(true);
    expect(looksGray(Uint8Array.from([10, 10, 11, 255, 200, 180, 200, 255]))).toBe(false);
  });

  it('gives about 30 evaluations per worker within bounds, and longer trainings to larger data', () => {
    expect(draftBudget(1, 500, 10).budget).toEqual({ maxEvaluations: 60, maxMinutes: 30 });
    expect(draftBudget(8, 500, 10).budget.maxEvaluations).toBe(240);
    expect(draftBudget(64, 500, 10).budget.maxEvaluations).toBe(400);
    expect([draftBudget(2, 1000, 100), draftBudget(2, 10_000, 784), draftBudget(2, 60_000, 784)].map((b) => b.evaluation.maxSeconds)).toEqual([60, 120, 300]);
    const b = draftBudget(2, 500, 10);
    expect(b.search.sampleSize).toBeLessThanOrEqual(b.search.populationSize);
    expect(b.reasons.join(' ')).toContain('rule of thumb');
  });

  it('writes run files the coordinator accepts, with the guessed settings', () => {
    const text = 'piece_id,kiln,wall_mm,result\n' + Array.from({ length: 30 }, (_, i) => `P${i},${['north', 'south'][i % 2]},${(4 + (i % 7) * 0.5).toFixed(1)},${['sound', 'cracked', 'warped'][i % 3]}`).join('\n');
    const guess = guessCsvSource(profileCsv(text, 'pieces.csv'));
    const csv = draftRunFile({ name: 'pieces.csv', schemaRef: '../run-file.schema.json', dataset: csvSourceOf('pieces.csv', guess), budget: draftBudget(2, 30, 3) });
    const config = parseRunConfig(csv);
    expect(config.dataset).toMatchObject({ kind: 'csv', labelColumn: 'result', task: 'classification', ignoreColumns: ['piece_id'], categoricalColumns: ['kiln'], missing: 'fill' });
    expect(config.budget).toEqual({ maxEvaluations: 60, maxMinutes: 30 });
    expect(csv.$schema).toBe('../run-file.schema.json');

    const images = draftRunFile({ name: 'crops', schemaRef: null, dataset: imageSourceOf('crops', guessImageSettings(facts([{ width: 20, height: 20, gray: true }]))), budget: draftBudget(4, 200, 400) });
    expect(images).not.toHaveProperty('$schema');
    expect(parseRunConfig(images).dataset).toEqual({ kind: 'image-folder', path: 'crops', imageSize: { width: 20, height: 20 }, resize: 'area', channels: 1 });
  });
});
