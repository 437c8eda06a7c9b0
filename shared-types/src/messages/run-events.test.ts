import { describe, expect, it } from 'vitest';
import { RUN_EVENT_KINDS, runEventValidator } from './run-events.js';

describe('run events', () => {
  it('has a compiled schema for every kind, and names a kind it does not know', () => {
    for (const kind of RUN_EVENT_KINDS) expect(runEventValidator(kind).kind).toBe(`'${kind}' event`);
    expect(() => runEventValidator('no-such-event' as never)).toThrow(/no event kind 'no-such-event'; add its schema to RUN_EVENT_SCHEMAS/);
  });

  it('checks a detail against its kind: a missing field, a wrong type and an unknown field are each named', () => {
    const v = runEventValidator('reissued');
    expect(v.issues({ evaluationId: 'r1-s0-a1', next: 'r1-s0-a2', reason: 'worker vanished' })).toEqual([]);
    expect(v.issues({ evaluationId: 'r1-s0-a1', reason: 'worker vanished' }).map((i) => i.path)).toContain('/next');
    expect(v.issues({ evaluationId: 'r1-s0-a1', next: 2, reason: 'x' }).map((i) => i.path)).toContain('/next');
    expect(v.issues({ evaluationId: 'r1-s0-a1', next: 'r1-s0-a2', reason: 'x', extra: true }).length).toBeGreaterThan(0);
    expect(() => runEventValidator('run-created').parse({ name: 'x', dataset: 'not-a-hash' })).toThrow(/invalid 'run-created' event: \/dataset/);
  });
});
