import { RunListQuery } from '@plumbline/contracts';
import { describe, expect, it } from 'vitest';
import { createStore } from './store.ts';
import { useSharedDatabaseFile } from './testing/shared-file.ts';
import { runInput } from './testing/fixtures.ts';

/**
 * `withOneChangeCheck`: the caches read inside one step (a request's token, then its page) look for commits by other
 * connections once, at the step's first lookup. Writes through the step's own connection are seen at once inside it,
 * and outside commits are seen from the next step on, as before.
 */
const { open } = useSharedDatabaseFile('plumbline-change-watch-');
const byRobot = RunListQuery.parse({ robot_id: 'kestrel-01' });

describe('one change check per step', () => {
  it('answers a step as of its first lookup and sees an outside commit in the next step', () => {
    const a = createStore(open());
    const b = createStore(open());
    const { token, info } = a.tokens.create({ role: 'lead', name: 'shift-lead' });
    a.runs.create(runInput(0, { robot_id: 'kestrel-01' }));
    const during = a.withOneChangeCheck(() => {
      const before = a.runs.list(byRobot).total;
      expect(a.tokens.verify(token)?.id).toBe(info.id);
      b.runs.create(runInput(1, { robot_id: 'kestrel-01' }));
      expect(b.tokens.revoke(info.id)).toBe(true);
      return { before, after: a.runs.list(byRobot).total, verified: a.tokens.verify(token)?.id };
    });
    expect(during).toEqual({ before: 1, after: 1, verified: info.id });
    expect(a.runs.list(byRobot).total).toBe(2);
    expect(a.tokens.verify(token)).toBeNull();
    expect(a.withOneChangeCheck(() => a.tokens.verify(token))).toBeNull();
  });

  it('sees writes through its own connection inside the step', () => {
    const a = createStore(open());
    const { token, info } = a.tokens.create({ role: 'lead', name: 'shift-lead' });
    a.withOneChangeCheck(() => {
      expect(a.runs.list(byRobot).total).toBe(0);
      expect(a.tokens.verify(token)?.id).toBe(info.id);
      a.runs.create(runInput(0, { robot_id: 'kestrel-01' }));
      expect(a.tokens.revoke(info.id)).toBe(true);
      expect(a.runs.list(byRobot).total).toBe(1);
      expect(a.tokens.verify(token)).toBeNull();
    });
  });

  it('ends the step when the function throws, and nests', () => {
    const a = createStore(open());
    const b = createStore(open());
    a.runs.create(runInput(0, { robot_id: 'kestrel-01' }));
    expect(() =>
      a.withOneChangeCheck(() => {
        a.runs.list(byRobot);
        throw new RangeError('stop');
      }),
    ).toThrow(RangeError);
    b.runs.create(runInput(1, { robot_id: 'kestrel-01' }));
    expect(a.runs.list(byRobot).total).toBe(2);
    const inner = a.withOneChangeCheck(() => {
      const first = a.runs.list(byRobot).total;
      b.runs.create(runInput(2, { robot_id: 'kestrel-01' }));
      return [first, a.withOneChangeCheck(() => a.runs.list(byRobot).total)];
    });
    expect(inner).toEqual([2, 2]);
    expect(a.runs.list(byRobot).total).toBe(3);
  });
});
