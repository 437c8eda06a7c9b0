import { NetbreederError, type RunPhase, type RunState } from '@netbreeder/shared-types';

/**
 * A run's lifecycle: its states, the changes of state that are legal, and which states end it.
 * Pure; the store refuses any other change (`RunStore.setRunState`), so this table is the one place
 * the lifecycle is written down.
 *
 * A run is created searching (`preparing` is in the status schema, but nothing writes it
 * today). It searches, may be paused and resumed, and when its budget is spent trains its champion
 * and finishes, or fails (no result a champion could come from, or every champion training
 * failed). The user may stop it before it ends (`RUN_CONTROLS`). A finished run may go back to
 * training its champion: a later champion round (a pick, or an ensemble asked after the end).
 * Failed and stopped are final.
 */
const TRANSITIONS: Record<RunState, readonly RunState[]> = {
  preparing: ['searching', 'failed', 'stopped'],
  searching: ['paused', 'training-champion', 'failed', 'stopped'],
  paused: ['searching', 'stopped'],
  'training-champion': ['finished', 'failed', 'stopped'],
  finished: ['training-champion'],
  failed: [],
  stopped: [],
};

/** The state a run is created in. */
export const INITIAL_RUN_STATE: RunState = 'searching';

/** Every state a run can be in. */
export const RUN_STATES = Object.keys(TRANSITIONS) as RunState[];

/**
 * The states of a run that has ended: its end time is set and a restarted coordinator does not
 * resume it. Only `finished` leads anywhere again (a later champion round); the others are final.
 */
export const ENDED_RUN_STATES: readonly RunState[] = ['finished', 'failed', 'stopped'];

/** The states of a run that has not ended: one a restarted coordinator resumes. */
export const OPEN_RUN_STATES: readonly RunState[] = RUN_STATES.filter((s) => !ENDED_RUN_STATES.includes(s));

/** `states` as a list of SQL string literals, for `state IN (…)`. */
export const sqlStateList = (states: readonly RunState[]): string => states.map((s) => `'${s}'`).join(', ');

export const isRunEnded = (state: RunState): boolean => ENDED_RUN_STATES.includes(state);

/**
 * What a run is doing, as people are shown it: `verifying` while it is still `searching` but its
 * search is done (budget spent or finish asked) and verifications are open, which the champion
 * phase waits for; otherwise its state.
 */
export function runPhase(state: RunState, searchDone: boolean, openVerifications: number): RunPhase {
  return state === 'searching' && searchDone && openVerifications > 0 ? 'verifying' : state;
}

/** True when a run may go from `from` to `to` (staying in the same state is not a change). */
export const isLegalTransition = (from: RunState, to: RunState): boolean => TRANSITIONS[from].includes(to);

/** A change of a run's state the lifecycle does not allow: a bug in the caller, which should have checked. */
export class IllegalRunTransitionError extends NetbreederError {
  constructor(
    readonly runId: string,
    readonly from: RunState,
    readonly to: RunState,
  ) {
    const legal = TRANSITIONS[from];
    super(
      'NB_ILLEGAL_RUN_TRANSITION',
      `run ${runId} cannot go from '${from}' to '${to}': from '${from}' a run ${legal.length ? `may only go to ${legal.map((s) => `'${s}'`).join(', ')}` : 'goes nowhere (it has ended)'}; check the run's state before changing it (coordinator/src/store/run-lifecycle.ts)`,
    );
  }
}

/** Throws {@link IllegalRunTransitionError} unless `from` → `to` is legal. */
export function assertTransition(runId: string, from: RunState, to: RunState): void {
  if (!isLegalTransition(from, to)) throw new IllegalRunTransitionError(runId, from, to);
}

/**
 * What an admin can do to a run (`RunManager.control`): pause (queue nothing new), resume, stop
 * (end without a champion), or finish (end the search now: what is in flight completes, then the
 * champion is trained).
 */
export type RunControl = 'pause' | 'resume' | 'stop' | 'finish';

/**
 * Each control: the states it may be asked in and the state it leaves the run in. `finish` ends the
 * search early: the run searches on (from `paused`, it searches again) until the champion phase
 * takes over; from `searching` it changes no state.
 */
export const RUN_CONTROLS: Record<RunControl, { from: readonly RunState[]; to: RunState }> = {
  pause: { from: ['searching'], to: 'paused' },
  resume: { from: ['paused'], to: 'searching' },
  stop: { from: ['searching', 'paused', 'training-champion'], to: 'stopped' },
  finish: { from: ['searching', 'paused'], to: 'searching' },
};

/** The state `action` leaves a run in `from` in, or null when it may not be asked in that state. */
export function controlTarget(action: RunControl, from: RunState): RunState | null {
  const control = RUN_CONTROLS[action];
  return control.from.includes(from) ? control.to : null;
}
