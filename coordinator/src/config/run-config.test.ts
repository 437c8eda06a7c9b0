import { describe, expect, it } from 'vitest';
import { ValidationError } from '@netbreeder/shared-types';
import { parseRunConfig } from './run-config.js';

describe('parseRunConfig', () => {
  it('fills every default from a minimal run description', () => {
    const c = parseRunConfig({ dataset: { kind: 'demo-tiles' } });
    expect(c.search).toEqual({ algorithm: 'asha-evolution', populationSize: 8, sampleSize: 3, eta: 3, objective: 'params', weightInheritance: true, reference: true, start: 'family', promoteReference: false, parents: 'first-rung' });
    expect(c.champion.epochs).toBeUndefined(); // absent: each genome's learning curve sets its final training length
    expect(c.dataset).toEqual({ kind: 'demo-tiles', samplesPerClass: 300, seed: 7 });
    expect(c.budget.maxEvaluations).toBe(200);
    expect(c.split).toEqual({ validation: 0.15, test: 0.15 });
  });

  it('names each bad field', () => {
    const bad = () => parseRunConfig({ dataset: { kind: 'demo-tiles' }, search: { populationSize: 'many' }, budget: { maxMinutes: -1 } });
    expect(bad).toThrow(ValidationError);
    try {
      bad();
    } catch (err) {
      const paths = (err as ValidationError).issues.map((i) => i.path);
      expect(paths).toContain('/search/populationSize');
      expect(paths).toContain('/budget/maxMinutes');
    }
  });

  it('rejects unknown fields, unknown dataset kinds and non-objects', () => {
    expect(() => parseRunConfig({ dataset: { kind: 'demo-tiles' }, speed: 'fast' })).toThrow(/invalid run configuration/);
    expect(() => parseRunConfig({ dataset: { kind: 'spreadsheet' } })).toThrow(/dataset/);
    expect(() => parseRunConfig([])).toThrow(/must be a JSON object/);
  });

  it('takes a $schema reference (for editors) as no setting', () => {
    const plain = parseRunConfig({ dataset: { kind: 'demo-tiles' } });
    expect(parseRunConfig({ $schema: '../run-file.schema.json', dataset: { kind: 'demo-tiles' } })).toEqual(plain);
  });

  it('does not change the object it was given', () => {
    const input = { dataset: { kind: 'demo-tiles' } };
    parseRunConfig(input);
    expect(input).toEqual({ dataset: { kind: 'demo-tiles' } });
  });
});
