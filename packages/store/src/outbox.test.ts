import { beforeEach, describe, expect, it } from 'vitest';
import { openDatabase } from './database.ts';
import { createStore } from './store.ts';
import { report, runInput, sha } from './testing/fixtures.ts';
import type { Db, Store } from './types.ts';
import { deliveryBackoffMs } from './webhook-repository.ts';

let db: Db;
let store: Store;
beforeEach(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
});

const T0 = new Date('2026-12-01T12:00:00.000Z');
const at = (ms: number) => new Date(T0.getTime() + ms);

describe('webhooks and deliveries', () => {
  it('queues one delivery per subscribed active webhook', () => {
    const a = store.webhooks.create({ url: 'https://ops.saltmarsh.example/hooks/a', events: ['run.analysed', 'run.reviewed'], secret: 's'.repeat(20) });
    const b = store.webhooks.create({ url: 'https://ops.saltmarsh.example/hooks/b', events: ['run.reviewed'], secret: 't'.repeat(20) });
    expect(new Set(store.webhooks.list().map((w) => w.id))).toEqual(new Set([a.id, b.id]));
    expect(a).toMatchObject({ url: 'https://ops.saltmarsh.example/hooks/a', events: ['run.analysed', 'run.reviewed'], active: true });
    expect(a).not.toHaveProperty('secret'); // the secret is never read back through the API shape
    expect(store.webhooks.enqueueEvent('run.analysed', { run: 'r1' }, T0)).toBe(1);
    expect(store.webhooks.enqueueEvent('run.reviewed', { run: 'r1' }, T0)).toBe(2);
    expect(store.webhooks.remove(b.id)).toBe(true);
    expect(store.webhooks.remove(b.id)).toBe(false);
    expect(store.webhooks.get(b.id)?.active).toBe(false);
    expect(store.webhooks.enqueueEvent('run.reviewed', { run: 'r2' }, T0)).toBe(1);
    expect(store.webhooks.deliveries(a.id).map((d) => d.event)).toEqual(['run.reviewed', 'run.reviewed', 'run.analysed']);
  });

  it('claims due deliveries under a lease so a second sender does not get them', () => {
    const w = store.webhooks.create({ url: 'https://ops.saltmarsh.example/hooks', events: ['run.analysed'], secret: 's'.repeat(20) });
    store.webhooks.enqueueEvent('run.analysed', { run: 'r1', score: 71 }, T0);
    const claimed = store.webhooks.claimDue(T0, 10, 30_000);
    expect(claimed).toHaveLength(1);
    expect(claimed[0]).toMatchObject({ webhook_id: w.id, url: 'https://ops.saltmarsh.example/hooks', secret: 's'.repeat(20), attempts: 0 });
    expect(JSON.parse(claimed[0]!.payload)).toEqual({ run: 'r1', score: 71 });
    expect(store.webhooks.claimDue(at(1000), 10)).toHaveLength(0);
    expect(store.webhooks.claimDue(at(30_000), 10)).toHaveLength(1); // lease ran out: the sender died
  });

  it('retries with exponential backoff, then gives up; a success ends it', () => {
    store.webhooks.create({ url: 'https://ops.saltmarsh.example/hooks', events: ['run.analysed'], secret: 's'.repeat(20) });
    store.webhooks.enqueueEvent('run.analysed', {}, T0);
    const id = store.webhooks.claimDue(T0, 1)[0]!.id;
    const policy = { maxAttempts: 3, baseDelayMs: 1000, maxDelayMs: 60_000 };
    expect(store.webhooks.markFailed(id, { statusCode: 503, error: 'HTTP 503' }, policy, T0)).toBe('pending');
    expect(store.webhooks.claimDue(at(999), 1)).toHaveLength(0);
    expect(store.webhooks.claimDue(at(1000), 1)).toHaveLength(1);
    expect(store.webhooks.markFailed(id, { error: 'ECONNREFUSED' }, policy, at(1000))).toBe('pending');
    expect(store.webhooks.claimDue(at(2999), 1)).toHaveLength(0); // second retry waits 2 s
    expect(store.webhooks.claimDue(at(3000), 1)).toHaveLength(1);
    expect(store.webhooks.markFailed(id, { statusCode: 500, error: 'HTTP 500' }, policy, at(3000))).toBe('failed');
    expect(store.webhooks.claimDue(at(10_000_000), 1)).toHaveLength(0);
    const [d] = store.webhooks.deliveries(store.webhooks.list()[0]!.id);
    expect(d).toMatchObject({ status: 'failed', attempts: 3, last_status_code: 500, last_error: 'HTTP 500', next_attempt_at: null });

    store.webhooks.enqueueEvent('run.analysed', {}, T0);
    const id2 = store.webhooks.claimDue(T0, 1)[0]!.id;
    store.webhooks.markDelivered(id2, 204);
    expect(store.webhooks.deliveries(store.webhooks.list()[0]!.id)[0]).toMatchObject({ status: 'delivered', attempts: 1, last_status_code: 204 });
    expect(store.stats().webhook_deliveries_pending).toBe(0);
  });

  it('backoff doubles and is capped', () => {
    expect([1, 2, 3, 4, 10].map((n) => deliveryBackoffMs(n, 10_000, 3_600_000))).toEqual([10_000, 20_000, 40_000, 80_000, 3_600_000]);
  });
});

describe('upload sessions', () => {
  const input = { robot_id: 'plover-01', run_id: 'shift-9', size_bytes: 3000, sha256: sha(9), temp_path: '/tmp/x.part', ttl_ms: 3_600_000 };

  it('advances the offset only by compare-and-set and completes once', () => {
    const s = store.uploads.create(input, T0);
    expect(s).toMatchObject({ state: 'open', received_bytes: 0, expires_at: '2026-12-01T13:00:00.000Z', run: null, temp_path: '/tmp/x.part' });
    expect(store.uploads.advance(s.id, 0, 1000)).toBe(true);
    expect(store.uploads.advance(s.id, 0, 1000)).toBe(false); // a replayed chunk
    expect(store.uploads.advance(s.id, 1000, 3000)).toBe(true);
    expect(() => store.uploads.advance(s.id, 3000, 3001)).toThrow(/CHECK constraint/); // past the announced size
    const { run } = store.runs.create(runInput(9, { robot_id: 'plover-01' }));
    store.uploads.complete(s.id, run.id);
    expect(store.uploads.get(s.id)).toMatchObject({ state: 'complete', run: run.id, received_bytes: 3000 });
    expect(store.uploads.advance(s.id, 3000, 3000)).toBe(false);
    expect(store.uploads.abort(s.id)).toBe(false);
  });

  it('lists expired open sessions and aborts them', () => {
    const s = store.uploads.create(input, T0);
    store.uploads.create({ ...input, run_id: 'shift-10' }, at(3_000_000));
    expect(store.uploads.expired(at(3_600_001)).map((e) => e.id)).toEqual([s.id]);
    expect(store.stats().open_uploads).toBe(2);
    expect(store.uploads.abort(s.id)).toBe(true);
    expect(store.uploads.expired(at(3_600_001))).toEqual([]);
  });
});

describe('robots and stats', () => {
  it('summarises each robot with latest run and recent scores, oldest first', () => {
    const scores = [80, 65, 90];
    for (const [i, score] of scores.entries()) {
      const { run } = store.runs.create(runInput(i, { robot_id: 'heron-01', site: 'northgate-yard' }));
      db.prepare('UPDATE runs SET received_at = ? WHERE id = ?').run(at(i * 1000).toISOString(), run.id);
      const t = store.runs.requestAnalysis(run.id)!;
      store.reports.recordAnalysis(run.id, report({ score, verdict: 'sound' }), t.job_key);
    }
    const { run: last } = store.runs.create(runInput(9, { robot_id: 'heron-01', site: 'northgate-yard' }));
    store.runs.create(runInput(10, { robot_id: 'wren-01' }));
    const heron = store.robots.get('heron-01', 2)!;
    expect(heron).toMatchObject({ robot_id: 'heron-01', site: 'northgate-yard', runs: 4, recent_scores: [65, 90] });
    expect(heron.latest_run?.id).toBe(last.id);
    expect(store.robots.list().map((r) => r.robot_id)).toEqual(['heron-01', 'wren-01']);
    expect(store.robots.get('nobody')).toBeNull();
    expect(store.stats()).toMatchObject({ runs_total: 5, runs_by_status: { done: 3, received: 2 }, runs_by_verdict: { sound: 3 } });
    expect(store.ping()).toBe(true);
    db.close();
    expect(store.ping()).toBe(false);
  });
});
