import { RunListQuery } from '@plumbline/contracts';
import { describe, expect, it } from 'vitest';
import { createStore } from './store.ts';
import { useSharedDatabaseFile } from './testing/shared-file.ts';
import { runInput } from './testing/fixtures.ts';

/**
 * The first-page `total` of the run list is cached per filter until the database changes; these cases check that
 * every kind of change is seen: a write through the same connection, a write by another connection (another
 * process in production: API and workers share the file), and a write outside the repository.
 */
const { open } = useSharedDatabaseFile('plumbline-total-');
const byRobot = RunListQuery.parse({ robot_id: 'kestrel-01' });

describe('run list total after writes', () => {
  it('follows writes by the same connection', () => {
    const store = createStore(open());
    store.runs.create(runInput(0, { robot_id: 'kestrel-01' }));
    expect(store.runs.list(byRobot).total).toBe(1);
    store.runs.create(runInput(1, { robot_id: 'kestrel-01' }));
    store.runs.create(runInput(2, { robot_id: 'plover-01' }));
    expect(store.runs.list(byRobot).total).toBe(2);
    expect(store.runs.list(RunListQuery.parse({})).total).toBe(3);
  });

  it('follows commits of another connection and raw SQL writes', () => {
    const a = createStore(open());
    const db2 = open();
    const b = createStore(db2);
    a.runs.create(runInput(0, { robot_id: 'kestrel-01' }));
    expect(a.runs.list(byRobot).total).toBe(1);
    b.runs.create(runInput(1, { robot_id: 'kestrel-01' }));
    expect(a.runs.list(byRobot).total).toBe(2);
    db2.prepare("DELETE FROM runs WHERE robot_id = 'kestrel-01' AND run_id = ?").run(runInput(1, {}).run_id);
    expect(a.runs.list(byRobot).total).toBe(1);
    expect(b.runs.list(byRobot).total).toBe(1);
  });

  it('shares a page between identical calls until a status change, then reads it again', () => {
    const a = createStore(open());
    const b = createStore(open());
    const first = a.runs.create(runInput(0, { robot_id: 'kestrel-01' })).run;
    const page = a.runs.list(byRobot);
    expect(a.runs.list(byRobot)).toBe(page);
    expect(Object.isFrozen(page)).toBe(true);
    // an update by another connection that changes no count must still be seen (status of the listed run)
    b.runs.requestAnalysis(first.id);
    const after = a.runs.list(byRobot);
    expect(after).not.toBe(page);
    expect(after.items[0]?.status).toBe('queued');
    expect(page.items[0]?.status).toBe('received');
  });

  it('answers a frozen query object (kept by the API per query string) like an equal fresh one, pages and writes included', () => {
    const a = createStore(open());
    for (let n = 0; n < 5; n++) a.runs.create(runInput(n, { robot_id: 'kestrel-01' }));
    const frozen = Object.freeze(RunListQuery.parse({ robot_id: 'kestrel-01', limit: 2 }));
    const first = a.runs.list(frozen);
    expect(first).toEqual(a.runs.list(RunListQuery.parse({ robot_id: 'kestrel-01', limit: 2 })));
    const next = Object.freeze({ ...frozen, cursor: first.next_cursor ?? '' });
    expect(a.runs.list(next).items.map((r) => r.id)).toEqual(a.runs.list({ ...next }).items.map((r) => r.id));
    expect(a.runs.list(next).items[0]?.id).not.toBe(first.items[0]?.id);
    a.runs.create(runInput(5, { robot_id: 'kestrel-01' }));
    expect(a.runs.list(frozen).total).toBe(6);
  });
});
