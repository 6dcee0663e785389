import { beforeEach, describe, expect, it } from 'vitest';
import { openDatabase } from './database.ts';
import { NotFoundError, RunConflictError } from './errors.ts';
import { createStore } from './store.ts';
import { flag, report, runInput, sha } from './testing/fixtures.ts';
import type { Db, Store } from './types.ts';

let db: Db;
let store: Store;
beforeEach(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
});

describe('runs.create', () => {
  it('is idempotent on (robot_id, run_id, sha256) and refuses different content under the same run id', () => {
    const a = store.runs.create(runInput(1));
    const b = store.runs.create(runInput(1));
    expect(a.created).toBe(true);
    expect(b.created).toBe(false);
    expect(b.run.id).toBe(a.run.id);
    expect(() => store.runs.create(runInput(1, { sha256: sha(999) }))).toThrow(RunConflictError);
    expect(store.runs.findByKey('kestrel-01', 'shift-1')?.id).toBe(a.run.id);
    expect(store.stats().runs_total).toBe(1);
  });

  it('keeps the manifest and normalises started_at to UTC', () => {
    const { run } = store.runs.create(runInput(2, { started_at: '2026-11-30T08:15:00+02:00', manifest: { format: 'plumbline-run/1' } }));
    expect(run.started_at).toBe('2026-11-30T06:15:00.000Z');
    expect(store.runs.manifest(run.id)).toEqual({ format: 'plumbline-run/1' });
  });
});

describe('reports.recordAnalysis', () => {
  it('records a result exactly once when the same job runs twice', () => {
    const { run } = store.runs.create(runInput(1));
    const ticket = store.runs.requestAnalysis(run.id)!;
    expect(ticket.job_key).toBe(`${run.id}-g1`);
    expect(store.runs.markAnalysing(run.id, ticket.job_key)).toBe(true);
    const r = report({ score: 62, verdict: 'doubtful', flags: [flag('scale-drift', 'warn', 1), flag('scale-drift', 'info', 2), flag('time-offset', 'critical', 1)] });
    const first = store.reports.recordAnalysis(run.id, r, ticket.job_key);
    const second = store.reports.recordAnalysis(run.id, r, ticket.job_key);
    expect(first.recorded).toBe(true);
    expect(second).toEqual({ recorded: false, reason: 'already-recorded' });
    expect(store.reports.history(run.id)).toHaveLength(1);
    expect(db.prepare('SELECT count(*) FROM flags WHERE run = ?').pluck().get(run.id)).toBe(3);
    expect(db.prepare('SELECT count(*) FROM segments WHERE run = ?').pluck().get(run.id)).toBe(3);
    expect(store.audit.list({ subject: run.id }).filter((e) => e.action === 'run.analysed')).toHaveLength(1);
    const summary = store.runs.get(run.id)!;
    expect(summary).toMatchObject({
      status: 'done',
      score: 62,
      verdict: 'doubtful',
      worst_severity: 'critical',
      flag_counts: { 'scale-drift': 2, 'time-offset': 1 },
      duration_s: 600,
      distance_m: 420,
    });
    expect(store.reports.current(run.id)).toEqual(r);
  });

  it('refuses the result of a superseded generation and keeps previous reports after re-analysis', () => {
    const { run } = store.runs.create(runInput(1));
    const g1 = store.runs.requestAnalysis(run.id)!;
    expect(store.reports.recordAnalysis(run.id, report({ score: 40, verdict: 'unfit', flags: [flag('loop-drift', 'critical')] }), g1.job_key).recorded).toBe(true);
    const g2 = store.runs.requestAnalysis(run.id, { policy: 'strict' })!;
    expect(g2).toMatchObject({ generation: 2, policy: 'strict' });
    // a late duplicate of generation 1 arriving now must not overwrite anything
    expect(store.reports.recordAnalysis(run.id, report({ score: 1, verdict: 'unfit' }), `${run.id}-g0`)).toEqual({ recorded: false, reason: 'stale-job' });
    expect(store.reports.recordAnalysis(run.id, report({ score: 90, verdict: 'sound', version: 'test-2' }), g2.job_key).recorded).toBe(true);
    const history = store.reports.history(run.id);
    expect(history.map((h) => [h.score, h.current])).toEqual([
      [90, true],
      [40, false],
    ]);
    expect(store.reports.get(history[1]!.id)?.score).toBe(40);
    expect(store.reports.current(run.id)?.analysis_version).toBe('test-2');
    // flags follow the current report only
    expect(db.prepare('SELECT count(*) FROM flags WHERE run = ?').pluck().get(run.id)).toBe(0);
    expect(store.runs.get(run.id)).toMatchObject({ score: 90, verdict: 'sound', worst_severity: null, flag_counts: {} });
  });

  it('refuses results for unknown runs and runs not waiting for analysis', () => {
    expect(store.reports.recordAnalysis('nope', report({ score: 1, verdict: 'sound' }), 'nope-g1')).toEqual({ recorded: false, reason: 'not-found' });
    const { run } = store.runs.create(runInput(3));
    const t = store.runs.requestAnalysis(run.id)!;
    expect(store.runs.markFailed(run.id, t.job_key, 'bundle unreadable')).toBe(true);
    expect(store.runs.get(run.id)).toMatchObject({ status: 'failed', status_reason: 'bundle unreadable' });
    expect(store.reports.recordAnalysis(run.id, report({ score: 1, verdict: 'sound' }), t.job_key)).toEqual({ recorded: false, reason: 'wrong-status' });
  });

  it('sets status only from the allowed states and selects ids by filter', () => {
    const a = store.runs.create(runInput(1)).run;
    const b = store.runs.create(runInput(2, { robot_id: 'tern-01' })).run;
    expect(store.runs.setStatus(a.id, 'rejected', { reason: 'manifest robot_id differs', from: ['queued'] })).toBe(false);
    expect(store.runs.setStatus(a.id, 'rejected', { reason: 'manifest robot_id differs', from: ['received'] })).toBe(true);
    expect(store.runs.get(a.id)).toMatchObject({ status: 'rejected', status_reason: 'manifest robot_id differs' });
    expect(store.runs.idsMatching({ robot_id: 'tern-01' })).toEqual([b.id]);
    expect(store.runs.idsMatching({ status: 'rejected' })).toEqual([a.id]);
    expect(store.runs.idsMatching({}, 1)).toHaveLength(1);
  });

  it('lists queued and analysing runs as pending tickets', () => {
    const a = store.runs.create(runInput(1)).run;
    const b = store.runs.create(runInput(2)).run;
    store.runs.create(runInput(3));
    store.runs.requestAnalysis(a.id);
    const tb = store.runs.requestAnalysis(b.id)!;
    store.runs.markAnalysing(b.id, tb.job_key);
    expect(store.runs.pendingTickets().map((t) => t.run).sort()).toEqual([a.id, b.id].sort());
  });
});

describe('writes with a callback inside the transaction', () => {
  it('queues the webhook delivery together with the recorded analysis, and rolls both back on a throw', () => {
    store.webhooks.create({ url: 'https://ops.saltmarsh.example/hooks', events: ['run.analysed', 'run.reviewed'], secret: 's'.repeat(20) });
    const { run } = store.runs.create(runInput(1));
    const t1 = store.runs.requestAnalysis(run.id)!;
    expect(() =>
      store.reports.recordAnalysis(run.id, report({ score: 70, verdict: 'sound' }), t1.job_key, {
        within: () => {
          throw new Error('disk full');
        },
      }),
    ).toThrow('disk full');
    expect(store.runs.get(run.id)).toMatchObject({ status: 'queued', score: null });
    expect(store.reports.history(run.id)).toHaveLength(0);
    const seen: string[] = [];
    const outcome = store.reports.recordAnalysis(run.id, report({ score: 70, verdict: 'sound' }), t1.job_key, {
      within: (summary) => {
        seen.push(`${summary.status}:${summary.score}`);
        store.webhooks.enqueueEvent('run.analysed', { run: summary });
      },
    });
    expect(outcome.recorded).toBe(true);
    expect(seen).toEqual(['done:70']);
    store.reviews.add(run.id, { decision: 'accept', note: '', flags: [] }, 'lead-ana', {
      within: (summary) => void store.webhooks.enqueueEvent('run.reviewed', { decision: summary.decision }),
    });
    expect(store.stats().webhook_deliveries_pending).toBe(2);
  });
});

describe('reviews', () => {
  it('stores the review, sets the decision, clears priority and audits it', () => {
    const { run } = store.runs.create(runInput(1));
    const t = store.runs.requestAnalysis(run.id)!;
    store.reports.recordAnalysis(run.id, report({ score: 50, verdict: 'unfit', flags: [flag('gnss-divergence', 'critical')] }), t.job_key);
    expect(db.prepare('SELECT priority FROM runs WHERE id = ?').pluck().get(run.id)).toBe(3);
    const review = store.reviews.add(
      run.id,
      { decision: 'accept-trimmed', note: 'cut the yard stretch', flags: [{ flag_id: 'gnss-divergence-1', disposition: 'upheld' }] },
      'lead-ana',
    );
    expect(review).toMatchObject({ run: run.id, decision: 'accept-trimmed', reviewer: 'lead-ana', flags: [{ flag_id: 'gnss-divergence-1', disposition: 'upheld' }] });
    expect(store.reviews.list(run.id)).toEqual([review]);
    expect(store.runs.get(run.id)).toMatchObject({ decision: 'accept-trimmed', reviewed_at: review.created_at });
    expect(db.prepare('SELECT priority FROM runs WHERE id = ?').pluck().get(run.id)).toBe(0);
    expect(store.audit.list({ subject: run.id })[0]).toMatchObject({ action: 'run.reviewed', actor: 'lead-ana' });
    expect(() => store.reviews.add('missing', { decision: 'reject', note: '', flags: [] }, 'lead-ana')).toThrow(NotFoundError);
  });
});

describe('audit log', () => {
  it('appends entries and refuses UPDATE and DELETE (triggers)', () => {
    const e = store.audit.append('admin-sam', 'token.created', 'token:abc', { role: 'lead' });
    expect(e).toMatchObject({ actor: 'admin-sam', action: 'token.created', subject: 'token:abc', detail: { role: 'lead' } });
    expect(() => db.prepare('UPDATE audit_log SET actor = ? WHERE id = ?').run('someone-else', e.id)).toThrow(/append-only/);
    expect(() => db.prepare('DELETE FROM audit_log WHERE id = ?').run(e.id)).toThrow(/append-only/);
    expect(() => db.prepare('DELETE FROM audit_log').run()).toThrow(/append-only/);
    expect(store.audit.list()).toEqual([e]);
  });

  it('lists newest first with subject filter and id paging', () => {
    for (let i = 0; i < 5; i++) store.audit.append('a', 'x', i % 2 ? 'odd' : 'even', { i });
    expect(store.audit.list({ subject: 'even' }).map((e) => e.detail.i)).toEqual([4, 2, 0]);
    const page = store.audit.list({ limit: 2 });
    expect(page.map((e) => e.detail.i)).toEqual([4, 3]);
    expect(store.audit.list({ beforeId: page[1]!.id, limit: 2 }).map((e) => e.detail.i)).toEqual([2, 1]);
  });
});

describe('tokens', () => {
  it('returns the plaintext once, stores only its SHA-256, verifies and revokes at once', () => {
    const { token, info } = store.tokens.create({ role: 'robot', name: 'kestrel-01 uplink', robot_id: 'kestrel-01' });
    expect(token).toMatch(/^plb_[0-9a-f]{16}_[A-Za-z0-9_-]{43}$/);
    const stored = db.prepare('SELECT token_hash FROM api_tokens WHERE id = ?').pluck().get(info.id) as Buffer;
    expect(stored.toString('hex')).not.toContain(token);
    expect(stored).toHaveLength(32);
    expect(store.tokens.verify(token)).toMatchObject({ id: info.id, role: 'robot', robot_id: 'kestrel-01', revoked_at: null });
    // one changed character of the secret, a wrong id, garbage
    const last = token.at(-1) === 'A' ? 'B' : 'A';
    expect(store.tokens.verify(token.slice(0, -1) + last)).toBeNull();
    expect(store.tokens.verify(token.replace(/^plb_[0-9a-f]{16}/, 'plb_0000000000000000'))).toBeNull();
    expect(store.tokens.verify('Bearer nonsense')).toBeNull();
    expect(store.tokens.countActive('robot')).toBe(1);
    expect(store.tokens.revoke(info.id)).toBe(true);
    expect(store.tokens.verify(token)).toBeNull();
    expect(store.tokens.revoke(info.id)).toBe(false);
    expect(store.tokens.list()[0]?.revoked_at).not.toBeNull();
    expect(store.tokens.countActive()).toBe(0);
  });

  it('refuses a robot token without a robot_id', () => {
    expect(() => store.tokens.create({ role: 'robot', name: 'nameless' })).toThrow(/robot_id/);
  });
});
