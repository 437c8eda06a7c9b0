import { describe, expect, it } from 'vitest';
import type { RunState } from '@netbreeder/shared-types';
import { ENDED_RUN_STATES, IllegalRunTransitionError, OPEN_RUN_STATES, RUN_CONTROLS, RUN_STATES, assertTransition, controlTarget, isLegalTransition, runPhase } from './run-lifecycle.js';

/** The legal changes, written out by hand from what the coordinator does (the run manager's controls, the champion phase, a later champion round). */
const LEGAL = new Set([
  'preparing→searching', 'preparing→failed', 'preparing→stopped',
  'searching→paused', 'searching→training-champion', 'searching→failed', 'searching→stopped',
  'paused→searching', 'paused→stopped',
  'training-champion→finished', 'training-champion→failed', 'training-champion→stopped',
  'finished→training-champion',
]);

describe('run lifecycle', () => {
  it('allows exactly the listed changes among every (from, to) pair of states', () => {
    expect(RUN_STATES).toHaveLength(7);
    let legal = 0;
    for (const from of RUN_STATES) {
      for (const to of RUN_STATES) {
        const expected = LEGAL.has(`${from}→${to}`);
        expect(isLegalTransition(from, to), `${from} → ${to}`).toBe(expected);
        if (expected) {
          legal++;
          expect(() => assertTransition('r1', from, to)).not.toThrow();
        } else {
          expect(() => assertTransition('r1', from, to)).toThrow(IllegalRunTransitionError);
        }
      }
    }
    expect(legal).toBe(LEGAL.size);
  });

  it('names the states a refused change could have gone to, or that the run has ended', () => {
    expect(() => assertTransition('r9', 'paused', 'finished')).toThrow("run r9 cannot go from 'paused' to 'finished': from 'paused' a run may only go to 'searching', 'stopped'");
    expect(() => assertTransition('r9', 'stopped', 'searching')).toThrow('goes nowhere (it has ended)');
  });

  it('splits the states into open and ended; of the ended, only finished leads anywhere again', () => {
    expect([...OPEN_RUN_STATES].sort()).toEqual(['paused', 'preparing', 'searching', 'training-champion']);
    expect([...ENDED_RUN_STATES].sort()).toEqual(['failed', 'finished', 'stopped']);
    const exits = (from: RunState) => RUN_STATES.filter((to) => isLegalTransition(from, to));
    expect(exits('failed')).toEqual([]);
    expect(exits('stopped')).toEqual([]);
    expect(exits('finished')).toEqual(['training-champion']);
  });

  it('lets every control lead only to a legal change (or to none: finish while searching)', () => {
    for (const [action, { from, to }] of Object.entries(RUN_CONTROLS)) {
      for (const state of from) expect(state === to || isLegalTransition(state, to), `${action} from ${state}`).toBe(true);
    }
    expect(controlTarget('pause', 'searching')).toBe('paused');
    expect(controlTarget('pause', 'paused')).toBeNull();
    expect(controlTarget('resume', 'searching')).toBeNull();
    expect(controlTarget('finish', 'searching')).toBe('searching');
    expect(controlTarget('finish', 'training-champion')).toBeNull();
    expect(controlTarget('stop', 'training-champion')).toBe('stopped');
    expect(controlTarget('stop', 'finished')).toBeNull();
  });

  it('is shown as verifying only while a done search waits for open verifications', () => {
    expect(runPhase('searching', true, 2)).toBe('verifying');
    expect(runPhase('searching', true, 0)).toBe('searching'); // the champion phase starts at the next pass
    expect(runPhase('searching', false, 2)).toBe('searching'); // spot checks while the search goes on
    for (const state of RUN_STATES.filter((s) => s !== 'searching')) expect(runPhase(state, true, 3)).toBe(state);
  });
});
