import { describe, expect, it } from 'vitest';
import type { ChampionCandidate } from '@netbreeder/shared-types';
import { heldBackCount, heldBackPair, heldBackWinner, MAX_HELD_BACK } from './held-back-check.js';

const candidate = (seq: number, extra: Partial<ChampionCandidate>): ChampionCandidate => ({ sourceEvaluationId: `r-s${seq}-a1`, genomeHash: String(seq).repeat(64).slice(0, 64), seq, valAccuracy: 0.9, champion: false, ...extra });

describe('the held-back check', () => {
  it('holds back a share of the validation split, capped, and none when off or when nothing would be left to train on', () => {
    expect(heldBackCount(1200, 0.5)).toBe(600);
    expect(heldBackCount(1_000_000, 0.5)).toBe(MAX_HELD_BACK);
    expect(heldBackCount(1200, 0)).toBe(0);
    expect(heldBackCount(1200, undefined)).toBe(0); // a run stored before the setting
    expect(heldBackCount(1, 0.9)).toBe(0);
  });

  it('compares the champion with a reference network that has its own final training only', () => {
    const champion = candidate(3, { champion: true });
    const reference = candidate(0, { reference: true });
    expect(heldBackPair([champion, reference])).toEqual({ champion, reference });
    expect(heldBackPair([candidate(0, { champion: true, reference: true })])).toBeNull();
    expect(heldBackPair([champion, candidate(5, { ensemblePosition: 1 })])).toBeNull();
  });

  it('exports the reference only when it scores strictly higher; a tie or a missing score keeps the search\'s choice', () => {
    expect(heldBackWinner(0.95, 0.97)).toBe('reference');
    expect(heldBackWinner(0.97, 0.97)).toBe('search');
    expect(heldBackWinner(0.98, 0.97)).toBe('search');
    expect(heldBackWinner(null, 0.97)).toBe('search');
    expect(heldBackWinner(0.9, undefined)).toBe('search');
  });
});
