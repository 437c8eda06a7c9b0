import { describe, expect, it } from 'vitest';
import type { RunConfig } from '@netbreeder/shared-types';
import { parseRunConfig } from '../config/run-config.js';
import { verificationSettings } from './verifier.js';

const DEFAULTS = { spotCheckFraction: 0.05, championCandidates: true, timeoutSeconds: 600, quarantineAfterFailures: 2, quarantineBelowReliability: 0.5 };

describe('verification settings of a run file', () => {
  it('have the documented defaults, also for runs stored before verification existed', () => {
    const config = parseRunConfig({ dataset: { kind: 'demo-tiles' } });
    expect(config.verification).toEqual(DEFAULTS);
    const { verification: _dropped, ...older } = config;
    expect(verificationSettings(older as RunConfig)).toEqual(DEFAULTS);
  });

  it('refuse a bad value, naming the field', () => {
    expect(() => parseRunConfig({ dataset: { kind: 'demo-tiles' }, verification: { spotCheckFraction: 1.5 } })).toThrow(/verification\/spotCheckFraction/);
    expect(() => parseRunConfig({ dataset: { kind: 'demo-tiles' }, verification: { quarantineAfterFailures: 0 } })).toThrow(/verification\/quarantineAfterFailures/);
  });
});
