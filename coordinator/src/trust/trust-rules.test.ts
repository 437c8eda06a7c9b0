import { describe, expect, it } from 'vitest';
import { compareOpinions, decideVerification, isSpotChecked, quarantineDecision, reliability, toleranceFor, TOLERANCES, type Opinion } from './trust-rules.js';

const opinion = (workerId: string, valAccuracy: number, extra: Partial<Opinion> = {}): Opinion => ({
  workerId,
  backend: 'wasm',
  valAccuracy,
  valLoss: 1 - valAccuracy,
  samplesSeen: 900,
  ...extra,
});

describe('tolerance by backends', () => {
  it('is tightest for one portable backend, wider across portable backends, widest with the native one', () => {
    expect(toleranceFor('wasm', 'wasm')).toBe(TOLERANCES.sameBackend);
    expect(toleranceFor('cpu', 'cpu')).toBe(TOLERANCES.sameBackend);
    expect(toleranceFor('wasm', 'cpu')).toBe(TOLERANCES.portable);
    expect(toleranceFor('cpu', 'wasm')).toBe(TOLERANCES.portable);
    expect(toleranceFor('tensorflow', 'tensorflow')).toBe(TOLERANCES.native);
    expect(toleranceFor('wasm', 'tensorflow')).toBe(TOLERANCES.native);
    expect(TOLERANCES.sameBackend.accuracy).toBeLessThan(TOLERANCES.portable.accuracy);
    expect(TOLERANCES.portable.accuracy).toBeLessThan(TOLERANCES.native.accuracy);
  });
});

describe('compareOpinions', () => {
  it('agrees within the tolerance and says by how much', () => {
    const c = compareOpinions(opinion('a', 0.8), opinion('b', 0.805, { valLoss: 0.2001 }));
    expect(c.agree).toBe(true);
    expect(c.accuracyDiff).toBeCloseTo(0.005, 9);
    expect(c.reason).toMatch(/agree: accuracy differs by 0\.0050/);
  });

  it('disagrees on accuracy or on loss alone', () => {
    expect(compareOpinions(opinion('a', 0.8), opinion('b', 0.82, { valLoss: 0.2 })).agree).toBe(false);
    expect(compareOpinions(opinion('a', 0.8), opinion('b', 0.8, { valLoss: 0.25 })).agree).toBe(false);
  });

  it('lets the same difference pass across backends that it fails on one backend', () => {
    const a = opinion('a', 0.8);
    expect(compareOpinions(a, opinion('b', 0.82, { valLoss: 0.2 })).agree).toBe(false);
    expect(compareOpinions(a, opinion('b', 0.82, { valLoss: 0.2, backend: 'cpu' })).agree).toBe(true);
  });

  it('never agrees on results of different amounts of training', () => {
    const c = compareOpinions(opinion('a', 0.8), opinion('b', 0.8, { samplesSeen: 450 }));
    expect(c.agree).toBe(false);
    expect(c.reason).toMatch(/different amounts of data/);
  });

  it('compares regression results on relative validation RMSE, never on the fitness in valAccuracy', () => {
    // Fitness 1 / (1 + standardised RMSE) with target std 4: RMSE 2.0 → 0.6667, 2.02 (1% more) → 0.6645.
    const reg = (workerId: string, rmse: number, extra: Partial<Opinion> = {}) => opinion(workerId, 1 / (1 + rmse / 4), { valRmse: rmse, valLoss: (rmse / 4) ** 2, ...extra });
    const same = compareOpinions(reg('a', 2), reg('b', 2.0005));
    expect(same.agree).toBe(true);
    expect(same.relativeRmseDiff).toBeCloseTo(0.0005 / 2.0005, 9);
    expect(same.reason).toMatch(/agree: validation RMSE differs by 0\.025%/);
    expect(same.reason).not.toMatch(/accuracy/);
    // 1% worse: the fitness moves by only 0.002 (inside the accuracy tolerance), yet one backend fails it
    // on RMSE (tolerance 0.05%) and so does the loss; wasm against cpu (RMSE tolerance 1%, loss 2%) lets 0.5% pass.
    expect(compareOpinions(reg('a', 2), reg('b', 2.02)).agree).toBe(false);
    expect(compareOpinions(reg('a', 2), reg('b', 2.01, { backend: 'cpu' })).agree).toBe(true);
    // RMSE alone decides when the losses are equal: 1.5% apart fails wasm against cpu.
    expect(compareOpinions(reg('a', 2), reg('b', 2.03, { backend: 'cpu', valLoss: 0.25 })).agree).toBe(false);
    expect(TOLERANCES.sameBackend.relativeRmse).toBeLessThan(TOLERANCES.portable.relativeRmse);
    expect(TOLERANCES.portable.relativeRmse).toBeLessThan(TOLERANCES.native.relativeRmse);
  });
});

describe('decideVerification (a quorum of 2 of 3)', () => {
  const honest = opinion('orig', 0.7);
  it('waits, then calls a result with no second opinion unverified', () => {
    expect(decideVerification(honest, []).kind).toBe('unverified');
    expect(decideVerification(honest, [], true).reason).toMatch(/in time/);
  });

  it('confirms on agreement and credits both workers', () => {
    expect(decideVerification(honest, [opinion('v1', 0.7)])).toMatchObject({ kind: 'confirmed', credit: ['orig', 'v1'], blame: [] });
  });

  it('asks a third worker on disagreement, or calls the result disputed when none comes', () => {
    const liarVerifier = opinion('v1', 0.95);
    expect(decideVerification(honest, [liarVerifier]).kind).toBe('ask-third-opinion');
    expect(decideVerification(honest, [liarVerifier], true)).toMatchObject({ kind: 'disputed', credit: [], blame: [] });
  });

  it('blames the odd one out: the result when two others agree against it, a verifier when the third sides with the result', () => {
    const inflated = opinion('liar', 0.95);
    expect(decideVerification(inflated, [opinion('v1', 0.7), opinion('v2', 0.7)])).toMatchObject({ kind: 'rejected', credit: ['v1', 'v2'], blame: ['liar'] });
    expect(decideVerification(honest, [opinion('liar', 0.95), opinion('v2', 0.7)])).toMatchObject({ kind: 'confirmed', credit: ['orig', 'v2'], blame: ['liar'] });
  });

  it('finds no majority in three different answers', () => {
    expect(decideVerification(honest, [opinion('v1', 0.9), opinion('v2', 0.5)]).kind).toBe('disputed');
  });
});

describe('reliability and quarantine', () => {
  const settings = { quarantineAfterFailures: 2, quarantineBelowReliability: 0.5 };
  it('scores an unchecked worker 1 and lowers the score with each failure', () => {
    expect(reliability({ agreed: 0, failed: 0 })).toBe(1);
    expect(reliability({ agreed: 0, failed: 1 })).toBe(0.5);
    expect(reliability({ agreed: 3, failed: 1 })).toBe(0.8);
    expect(reliability({ agreed: 0, failed: 2 })).toBeCloseTo(1 / 3, 12);
  });

  it('quarantines after repeated failures, not after one slip or on a long good record', () => {
    expect(quarantineDecision({ agreed: 0, failed: 1 }, settings).quarantine).toBe(false);
    expect(quarantineDecision({ agreed: 0, failed: 2 }, settings)).toMatchObject({ quarantine: true });
    expect(quarantineDecision({ agreed: 10, failed: 2 }, settings).quarantine).toBe(false); // reliability 11/13
    expect(quarantineDecision({ agreed: 0, failed: 2 }, settings).reason).toMatch(/2 of 2 verified results failed/);
  });
});

describe('isSpotChecked', () => {
  it('draws about the asked fraction, the same draws for the same seed, none at 0 and all at 1', () => {
    const ids = Array.from({ length: 4000 }, (_, i) => `r1-s${i}-a1`);
    const picked = ids.filter((id) => isSpotChecked(7, id, 0.05));
    expect(picked.length / ids.length).toBeGreaterThan(0.04);
    expect(picked.length / ids.length).toBeLessThan(0.06);
    expect(ids.filter((id) => isSpotChecked(7, id, 0.05))).toEqual(picked);
    expect(ids.filter((id) => isSpotChecked(8, id, 0.05))).not.toEqual(picked);
    expect(ids.some((id) => isSpotChecked(7, id, 0))).toBe(false);
    expect(ids.every((id) => isSpotChecked(7, id, 1))).toBe(true);
  });
});
