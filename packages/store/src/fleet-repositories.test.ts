import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, type MaintenanceFinding, type Report } from '@plumbline/contracts';
import { openDatabase } from './database.ts';
import { createStore } from './store.ts';
import { flag, report, runInput } from './testing/fixtures.ts';
import type { Db, Store } from './types.ts';
import { PolicyExistsError } from './policy-repository.ts';

let db: Db;
let store: Store;
beforeEach(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
});
afterEach(() => db.close());

function analysed(n: number, rep: Report, startedAt: string): string {
  const { run } = store.runs.create(runInput(n, { started_at: startedAt }));
  const t = store.runs.requestAnalysis(run.id)!;
  expect(store.reports.recordAnalysis(run.id, rep, t.job_key)).toMatchObject({ recorded: true });
  return run.id;
}

function withOffset(offsetS: number): Report {
  const r = report({ score: 90, verdict: 'sound' });
  return { ...r, estimates: { ...r.estimates, time_offset_s: { value: offsetS, sigma: 0.001, unit: 's' } } };
}

function finding(metric: MaintenanceFinding['metric'], since: string): MaintenanceFinding {
  return {
    id: `kestrel-01/${metric}/${since}`, robot_id: 'kestrel-01', metric, severity: 'warn', method: 'trend', change: 1.2, unit: 'deg', runs: 5, since_run: since,
    since: null, latest_run: 'x', slope_per_run: 0.2, slope_low: 0.1, slope_high: 0.3, message: 'm', action: 'a', status: 'open', detected_at: 'now', updated_at: 'now',
  };
}

describe('maintenance repository', () => {
  it('reads current estimates oldest first by started_at', () => {
    analysed(2, withOffset(0.002), '2026-11-30T08:00:00Z');
    analysed(1, withOffset(0.001), '2026-11-29T08:00:00Z');
    const rows = store.maintenance.robotEstimates('kestrel-01');
    expect(rows.map((r) => r.run_id)).toEqual(['shift-1', 'shift-2']);
    expect(rows[1]!.estimates.time_offset_s).toEqual({ value: 0.002, sigma: 0.001, unit: 's' });
    expect(store.maintenance.robotEstimates('kestrel-01', 1).map((r) => r.run_id)).toEqual(['shift-2']);
  });
  it('opens, keeps and resolves findings per metric', () => {
    analysed(1, withOffset(0.001), '2026-11-29T08:00:00Z');
    const first = store.maintenance.saveFindings('kestrel-01', [finding('extrinsic_rotation_deg', 'r1')], '2026-12-01T00:00:00.000Z');
    expect(first.opened).toHaveLength(1);
    const second = store.maintenance.saveFindings('kestrel-01', [finding('extrinsic_rotation_deg', 'r2'), finding('time_offset_ms', 'r3')], '2026-12-02T00:00:00.000Z');
    expect(second.updated[0]).toMatchObject({ id: 'kestrel-01/extrinsic_rotation_deg/r1', detected_at: '2026-12-01T00:00:00.000Z', since_run: 'r2' });
    expect(second.opened.map((f) => f.metric)).toEqual(['time_offset_ms']);
    const third = store.maintenance.saveFindings('kestrel-01', [], '2026-12-03T00:00:00.000Z');
    expect(third.resolved).toHaveLength(2);
    expect(store.maintenance.list()).toEqual([]);
    expect(store.maintenance.list({ status: 'resolved', robotId: 'kestrel-01' })).toHaveLength(2);
  });
});

describe('policy repository', () => {
  it('stores versions once and finds the latest and the previous one', () => {
    const v1 = { ...DEFAULT_POLICY, name: 'yard', version: '1' };
    const v2 = { ...DEFAULT_POLICY, name: 'yard', version: '2' };
    store.policies.create(v1, 'h1', 'admin:test');
    store.policies.create(v2, 'h2', 'admin:test');
    expect(() => store.policies.create(v1, 'h1', 'admin:test')).toThrow(PolicyExistsError);
    expect(store.policies.get('yard')?.version).toBe('2');
    expect(store.policies.get('yard', '1')?.hash).toBe('h1');
    expect(store.policies.previous('yard', '2')?.version).toBe('1');
    expect(store.policies.previous('yard', '1')).toBeNull();
    expect(store.policies.list().map((p) => p.version)).toEqual(['1', '2']);
  });
});

describe('feedback repository', () => {
  it('reads dispositions of the latest review with kind, value and site', () => {
    const f1 = flag('pose-jump', 'critical', 1);
    const f2 = flag('time-offset', 'warn', 1);
    const id = analysed(1, report({ score: 40, verdict: 'unfit', flags: [f1, f2] }), '2026-11-29T08:00:00Z');
    store.reviews.add(id, { decision: 'reject', note: '', flags: [{ flag_id: f1.id, disposition: 'dismissed' }] }, 'lead:a');
    store.reviews.add(id, { decision: 'accept-trimmed', note: '', flags: [{ flag_id: f1.id, disposition: 'upheld' }, { flag_id: f2.id, disposition: 'dismissed' }] }, 'lead:a');
    expect(store.feedback.reviewedFlags()).toEqual([
      { kind: 'pose-jump', site: 'harbourside-depot', value: 1.5, disposition: 'upheld' },
      { kind: 'time-offset', site: 'harbourside-depot', value: 1.5, disposition: 'dismissed' },
    ]);
    expect(store.feedback.reviewedFlags({ site: 'northgate-yard' })).toEqual([]);
  });
  it('lists runs whose verdict moved between the previous and the current report', () => {
    const id = analysed(1, report({ score: 60, verdict: 'doubtful' }), '2026-11-29T08:00:00Z');
    analysed(2, report({ score: 90, verdict: 'sound' }), '2026-11-29T09:00:00Z');
    const t = store.runs.requestAnalysis(id, { policy: 'yard' })!;
    store.reports.recordAnalysis(id, { ...report({ score: 85, verdict: 'sound' }), policy_hash: 'q'.repeat(16) }, t.job_key);
    expect(store.feedback.verdictChanges()).toEqual([
      { run: id, robot_id: 'kestrel-01', run_id: 'shift-1', before: { verdict: 'doubtful', score: 60, policy_hash: 'p'.repeat(16) }, after: { verdict: 'sound', score: 85, policy_hash: 'q'.repeat(16) } },
    ]);
    expect(store.feedback.verdictChanges({ policies: ['other@1'] })).toHaveLength(0);
    expect(store.feedback.verdictChanges({ policies: ['yard'] })).toHaveLength(1);
  });
});
