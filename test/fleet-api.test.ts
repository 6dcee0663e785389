/**
 * Fleet view through the HTTP API: merge gate answers for unreviewed, reviewed and partially usable runs, versioned
 * policies (store, apply to past runs through the queue, verdict changes), review feedback, and robot calibration
 * findings with the robot.maintenance webhook queued by the worker's follow-up.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import pino from 'pino';
import { DEFAULT_POLICY, type Flag, type Report } from '@plumbline/contracts';
import { createTestApp, type TestApp } from '../services/api/src/testing.ts';
import { createAfterRecorded, withStoredPolicies } from '../services/worker/src/fleet-hooks.ts';
import { flag, report, runInput } from '../packages/store/src/testing/fixtures.ts';

let t: TestApp;
beforeEach(async () => {
  t = await createTestApp();
});
afterEach(async () => t.close());

const auth = (role: keyof TestApp['tokens']) => ({ authorization: `Bearer ${t.tokens[role]}` });

function withFlags(flags: Flag[], verdict: Report['verdict']): Report {
  return report({ score: verdict === 'sound' ? 95 : 50, verdict, flags });
}
function analysed(n: number, rep: Report, over: Parameters<typeof runInput>[1] = {}): string {
  const { run } = t.store.runs.create(runInput(n, over));
  const ticket = t.store.runs.requestAnalysis(run.id)!;
  expect(t.store.reports.recordAnalysis(run.id, rep, ticket.job_key)).toMatchObject({ recorded: true });
  return run.id;
}
const at = (f: Flag, t0: number, t1: number, value: number): Flag => ({ ...f, t_start: t0, t_end: t1, value });

describe('POST /api/v1/merge-gate', () => {
  it('answers for unreviewed, reviewed and partially usable runs', async () => {
    const sound = analysed(1, withFlags([], 'sound'));
    const jump = at(flag('pose-jump', 'critical', 1), 100, 110, 1.5);
    const offset = at(flag('time-offset', 'warn', 1), 300, 320, 25);
    const unfit = analysed(2, withFlags([jump, offset], 'unfit'));
    const trimmed = analysed(3, withFlags([jump, offset], 'unfit'));
    const rejected = analysed(4, withFlags([jump], 'unfit'));
    const review = (id: string, body: object) => t.app.inject({ method: 'POST', url: `/api/v1/runs/${id}/reviews`, headers: auth('lead'), payload: body });
    expect((await review(trimmed, { decision: 'accept-trimmed', flags: [{ flag_id: offset.id, disposition: 'upheld' }] })).statusCode).toBe(201);
    expect((await review(rejected, { decision: 'reject' })).statusCode).toBe(201);

    const r = await t.app.inject({ method: 'POST', url: '/api/v1/merge-gate', headers: auth('integrator'), payload: { runs: [sound, unfit, trimmed, rejected] } });
    expect(r.statusCode, r.body).toBe(200);
    const body = r.json();
    expect(body.all_ready).toBe(false);
    const [a, b, c, d] = body.runs;
    expect(a).toMatchObject({ ready: true, state: 'ready', keep: [{ t_start: 0, t_end: 600 }] }); // fixture run spans 600 s
    expect(b).toMatchObject({ ready: false, state: 'needs-review', verdict: 'unfit' });
    expect(c).toMatchObject({ ready: true, state: 'ready-trimmed', decision: 'accept-trimmed' });
    expect(c.keep).toEqual([{ t_start: 0, t_end: 100 }, { t_start: 110, t_end: 300 }, { t_start: 320, t_end: 600 }]);
    expect(d).toMatchObject({ ready: false, state: 'not-ready', decision: 'reject' });
  });

  it('judges under a stored policy version and refuses unknown runs and policies', async () => {
    const offset = at(flag('time-offset', 'warn', 1), 300, 320, 25);
    const id = analysed(1, withFlags([offset], 'doubtful'));
    const loose = { ...DEFAULT_POLICY, name: 'loose-clock', version: '1', thresholds: { ...DEFAULT_POLICY.thresholds, 'time-offset': { warn: 30, critical: 60, unit: 'ms' } } };
    expect((await t.app.inject({ method: 'POST', url: '/api/v1/policies', headers: auth('admin'), payload: loose })).statusCode).toBe(201);
    const gate = (payload: object) => t.app.inject({ method: 'POST', url: '/api/v1/merge-gate', headers: auth('lead'), payload });
    expect((await gate({ runs: [id] })).json().runs[0]).toMatchObject({ state: 'needs-review' });
    const r = await gate({ runs: [id], policy: 'loose-clock' });
    expect(r.json()).toMatchObject({ policy: 'loose-clock@1', all_ready: true, runs: [{ state: 'ready', verdict: 'sound' }] });
    expect((await gate({ runs: ['nope'] })).statusCode).toBe(404);
    expect((await gate({ runs: [id], policy: 'nope@9' })).json()).toMatchObject({ status: 404, code: 'POLICY_NOT_FOUND' });
  });
});

describe('run.merge-ready webhook', () => {
  it('follows the merge gate: after a sound analysis and an accept, not for a trimmed run with nothing left', async () => {
    const hook = t.store.webhooks.create({ url: 'http://127.0.0.1:9/h', events: ['run.merge-ready'], secret: 's'.repeat(20) });
    const after = createAfterRecorded(t.store, pino({ level: 'silent' }));
    const sound = analysed(1, withFlags([], 'sound'));
    after(sound, new Date('2026-12-01T08:00:00Z'));
    const whole = at(flag('units', 'critical', 1), 0, 600, 56);
    const unusable = analysed(2, withFlags([whole], 'unfit'));
    after(unusable, new Date('2026-12-01T08:00:00Z')); // unfit and unreviewed: not ready
    const review = (id: string, body: object) => t.app.inject({ method: 'POST', url: `/api/v1/runs/${id}/reviews`, headers: auth('lead'), payload: body });
    expect((await review(unusable, { decision: 'accept-trimmed' })).statusCode).toBe(201); // nothing left to keep
    expect(t.store.webhooks.deliveries(hook.id)).toHaveLength(1);
    expect((await review(unusable, { decision: 'accept' })).statusCode).toBe(201);
    expect(t.store.webhooks.deliveries(hook.id).map((d) => d.event)).toEqual(['run.merge-ready', 'run.merge-ready']);
  });
});

describe('policies', () => {
  it('a worker resolves stored versions as name@version and bare names as the latest version', () => {
    t.store.policies.create({ ...DEFAULT_POLICY, name: 'yard', version: '1' }, 'h1', 'admin:test');
    t.store.policies.create({ ...DEFAULT_POLICY, name: 'yard', version: '2', thresholds: { ...DEFAULT_POLICY.thresholds, window_s: 20 } }, 'h2', 'admin:test');
    const resolve = withStoredPolicies(t.store, (n) => (n === null || n === 'default' ? DEFAULT_POLICY : null));
    expect(resolve('yard@1')?.thresholds.window_s).toBe(10);
    expect(resolve('yard')?.version).toBe('2');
    expect(resolve(null)).toBe(DEFAULT_POLICY);
    expect(resolve('yard@3')).toBeNull();
    expect(resolve('other')).toBeNull();
  });

  it('stores versions once, applies one to past runs through the queue and lists verdicts that moved', async () => {
    const id = analysed(1, withFlags([at(flag('time-offset', 'warn', 1), 10, 20, 25)], 'doubtful'));
    const v1 = { ...DEFAULT_POLICY, name: 'yard', version: '1' };
    const created = await t.app.inject({ method: 'POST', url: '/api/v1/policies', headers: auth('admin'), payload: v1 });
    expect(created.statusCode).toBe(201);
    expect(created.json().hash).toMatch(/^[0-9a-f]{64}$/);
    expect((await t.app.inject({ method: 'POST', url: '/api/v1/policies', headers: auth('admin'), payload: v1 })).json()).toMatchObject({ status: 409, code: 'POLICY_EXISTS' });
    expect((await t.app.inject({ method: 'POST', url: '/api/v1/policies', headers: auth('lead'), payload: v1 })).statusCode).toBe(403);
    const applied = await t.app.inject({ method: 'POST', url: '/api/v1/policies/yard/apply', headers: auth('admin'), payload: {} });
    expect(applied.json()).toEqual({ policy: 'yard@1', queued: 1 });
    const ticket = t.store.runs.ticket(id)!;
    expect(ticket.policy).toBe('yard@1');
    // The worker records the re-analysis (scripted here): the verdict moves from doubtful to sound.
    t.store.runs.markAnalysing(id, ticket.job_key);
    t.store.reports.recordAnalysis(id, { ...withFlags([], 'sound'), policy_hash: 'y'.repeat(16) }, ticket.job_key);
    const changes = await t.app.inject({ method: 'GET', url: '/api/v1/policies/yard/changes', headers: auth('integrator') });
    expect(changes.json().changes).toEqual([
      { run: id, robot_id: 'kestrel-01', run_id: 'shift-1', before: { verdict: 'doubtful', score: 50, policy_hash: 'p'.repeat(16) }, after: { verdict: 'sound', score: 95, policy_hash: 'y'.repeat(16) } },
    ]);
    expect((await t.app.inject({ method: 'GET', url: '/api/v1/policies', headers: auth('lead') })).json().map((p: { version: string }) => p.version)).toEqual(['1']);
  });
});

describe('GET /api/v1/feedback', () => {
  it('counts dispositions and suggests a threshold from the reviewed history', async () => {
    // Time-offset flags: dismissed at 21–29 ms, upheld at 31–90 ms; with a 0 % target the cut lies at 30 ms.
    const values = [[21, 'dismissed'], [24, 'dismissed'], [29, 'dismissed'], [31, 'upheld'], [45, 'upheld'], [60, 'upheld'], [90, 'upheld']] as const;
    for (const [i, [v, disposition]] of values.entries()) {
      const f = at(flag('time-offset', 'warn', 1), 10, 20, v);
      const id = analysed(i + 1, withFlags([f], 'doubtful'), { site: i % 2 ? 'northgate-yard' : 'harbourside-depot' });
      t.store.reviews.add(id, { decision: 'accept', note: '', flags: [{ flag_id: f.id, disposition }] }, 'lead:a');
    }
    const r = await t.app.inject({ method: 'GET', url: '/api/v1/feedback?target_dismissed_rate=0', headers: auth('lead') });
    expect(r.statusCode, r.body).toBe(200);
    const body = r.json();
    expect(body.by_kind).toEqual([{ kind: 'time-offset', site: null, upheld: 4, dismissed: 3, rerun_needed: 0, precision: 4 / 7 }]);
    expect(body.by_kind_site).toHaveLength(2);
    expect(body.suggestions[0]).toMatchObject({ kind: 'time-offset', ok: true, current_warn: DEFAULT_POLICY.thresholds['time-offset'].warn, suggested_warn: 30, upheld_kept: 4, dismissed_kept: 0 });
  });
});

describe('robot calibration', () => {
  it('the worker follow-up opens a finding, queues robot.maintenance, and the API shows series and findings', async () => {
    t.store.webhooks.create({ url: 'http://127.0.0.1:9/h', events: ['robot.maintenance'], secret: 's'.repeat(20) });
    const after = createAfterRecorded(t.store, pino({ level: 'silent' }));
    // 14 shifts: the odometry clock offset is steady at ~0 ms, then steps by 15 ms from shift 9 on.
    for (let i = 0; i < 14; i++) {
      const base = report({ score: 90, verdict: 'sound' });
      const offsetS = (i >= 9 ? 0.015 : 0) + 0.0005 * Math.sin(i * 12.9898);
      const rep = { ...base, estimates: { ...base.estimates, time_offset_s: { value: offsetS, sigma: 0.0005, unit: 's' } } };
      const id = analysed(i + 1, rep, { started_at: `2026-10-${String(i + 1).padStart(2, '0')}T06:00:00Z` });
      after(id, new Date(`2026-10-${String(i + 1).padStart(2, '0')}T08:00:00Z`));
    }
    const list = await t.app.inject({ method: 'GET', url: '/api/v1/maintenance', headers: auth('integrator') });
    expect(list.json()).toHaveLength(1);
    expect(list.json()[0]).toMatchObject({ robot_id: 'kestrel-01', metric: 'time_offset_ms', method: 'step', since_run: expect.any(String) });
    expect(list.json()[0].message).toMatch(/^odometry–IMU time offset has risen by 1\d\.\d ms in a step 5 runs ago since 2026-10-10: /);
    const cal = await t.app.inject({ method: 'GET', url: '/api/v1/robots/kestrel-01/calibration', headers: auth('robot') });
    expect(cal.statusCode).toBe(200);
    const series = cal.json().series.find((s: { metric: string }) => s.metric === 'time_offset_ms');
    expect(series.v).toHaveLength(14);
    expect(series.v[13]).toBeCloseTo(15 + 0.5 * Math.sin(13 * 12.9898), 6);
    // One robot.maintenance delivery: opened once, kept open (not re-sent) on the following shifts.
    expect(t.store.stats().webhook_deliveries_pending).toBe(1);
    expect((await t.app.inject({ method: 'GET', url: '/api/v1/robots/plover-01/calibration', headers: auth('lead') })).statusCode).toBe(404);
    const refreshed = await t.app.inject({ method: 'POST', url: '/api/v1/robots/kestrel-01/calibration/refresh', headers: auth('lead') });
    expect(refreshed.json()).toMatchObject({ opened: 0, resolved: 0, open: [{ metric: 'time_offset_ms' }] });
  });
});
