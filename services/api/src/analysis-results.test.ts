import { gzipSync } from 'node:zlib';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { report } from '../../../packages/store/src/testing/fixtures.ts';
import { acceptsGzip } from './routes/runs.ts';
import { createTestApp, type TestApp } from './testing.ts';

/**
 * The routes remote workers use (start a job, post its result) and the repaired trajectory served from the blob the
 * result carried. Runs are created through the store; the analysis itself is not under test here.
 */
let t: TestApp;
beforeEach(async () => {
  t = await createTestApp();
});
afterEach(() => t.close());

const CSV = 't,x,y,z,qw,qx,qy,qz\n0.000000,0.0000,0.0000,0.0000,1.000000000,0.000000000,0.000000000,0.000000000\n';

function queuedRun(n = 1): { id: string; jobKey: string } {
  const { run } = t.store.runs.create({ robot_id: 'kestrel-01', run_id: `shift-${n}`, site: 'harbourside-depot', started_at: null, sha256: String(n).repeat(64).slice(0, 64), size_bytes: 10 });
  const ticket = t.store.runs.requestAnalysis(run.id);
  if (!ticket) throw new Error('no ticket');
  return { id: run.id, jobKey: ticket.job_key };
}

const post = (url: string, payload: unknown, role: keyof TestApp['tokens'] = 'admin') =>
  t.app.inject({ method: 'POST', url, headers: { authorization: `Bearer ${t.tokens[role]}` }, payload: payload as object });

describe('POST /api/v1/runs/:id/analysis/start', () => {
  it('turns the run analysing under the current job key and answers the bundle hash and the configured policy', async () => {
    const { id, jobKey } = queuedRun();
    const res = await post(`/api/v1/runs/${id}/analysis/start`, { job_key: jobKey });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ started: true, sha256: '1'.repeat(64), policy: { name: 'default' } });
    expect(t.store.runs.get(id)?.status).toBe('analysing');
  });
  it('answers stale for an older job key, and fails the run for an unknown policy', async () => {
    const { id, jobKey } = queuedRun();
    expect((await post(`/api/v1/runs/${id}/analysis/start`, { job_key: `${jobKey}x` })).json()).toEqual({ started: false, reason: 'stale' });
    const res = await post(`/api/v1/runs/${id}/analysis/start`, { job_key: jobKey, policy: 'no-such-policy' });
    expect(res.json()).toMatchObject({ started: false, reason: 'unknown-policy' });
    expect(t.store.runs.get(id)?.status).toBe('failed');
    expect((await post('/api/v1/runs/nope/analysis/start', { job_key: 'nope-g1' })).statusCode).toBe(404);
  });
});

describe('POST /api/v1/runs/:id/analysis', () => {
  it('records a report with its trajectory once; a second post is refused with the reason', async () => {
    const { id, jobKey } = queuedRun();
    const body = { job_key: jobKey, report: report({ score: 81, verdict: 'sound' }), repaired_csv_gz_base64: gzipSync(CSV).toString('base64') };
    const first = await post(`/api/v1/runs/${id}/analysis`, body);
    expect(first.statusCode).toBe(200);
    expect(first.json()).toMatchObject({ recorded: true, run: { status: 'done', score: 81 } });
    const second = await post(`/api/v1/runs/${id}/analysis`, body);
    expect(second.json()).toMatchObject({ recorded: false, reason: 'already-recorded' });
    expect(t.store.reports.history(id)).toHaveLength(1);
    expect(t.store.reports.repairedCsvOf(id)).toMatch(/^[0-9a-f]{64}$/);
  });
  it('rejects the run with the located reason, once', async () => {
    const { id, jobKey } = queuedRun();
    const rejected = { reason: 'imu.csv:4:2: not a number', code: 'CSV_BAD_NUMBER', file: 'imu.csv', line: 4, column: 2 };
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, rejected })).json()).toMatchObject({ recorded: true, run: { status: 'rejected' } });
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, rejected })).json()).toMatchObject({ recorded: false, reason: 'stale-job' });
    const audit = t.store.audit.list({ subject: id, limit: 10 }).find((a) => a.action === 'run.rejected');
    expect(audit?.detail).toMatchObject({ file: 'imu.csv', line: 4, column: 2 });
  });
  it('marks the run failed', async () => {
    const { id, jobKey } = queuedRun();
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, failed: { reason: 'out of memory' } })).json()).toMatchObject({ recorded: true, run: { status: 'failed' } });
  });
  it('refuses a trajectory that is not gzip or not a trajectory CSV, and a non-admin token', async () => {
    const { id, jobKey } = queuedRun();
    const r = report({ score: 50, verdict: 'doubtful' });
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, report: r, repaired_csv_gz_base64: Buffer.from(CSV).toString('base64') })).statusCode).toBe(400);
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, report: r, repaired_csv_gz_base64: gzipSync('a,b\n1,2\n').toString('base64') })).statusCode).toBe(400);
    expect((await post(`/api/v1/runs/${id}/analysis`, { job_key: jobKey, report: r }, 'lead')).statusCode).toBe(403);
    expect(t.store.runs.get(id)?.status).toBe('queued');
  });
});

describe('the large result body', () => {
  it('is not read without a valid token (401 before parsing, where an unparsable body would otherwise be a 400)', async () => {
    const { id } = queuedRun();
    const res = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${id}/analysis`, headers: { 'content-type': 'application/json' }, payload: '{"job_key": '.padEnd(2 * 1024 * 1024, ' ') });
    expect(res.statusCode).toBe(401);
    const lead = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${id}/analysis`, headers: { 'content-type': 'application/json', authorization: `Bearer ${t.tokens.lead}` }, payload: '{"job_key": ' });
    expect(lead.statusCode).toBe(403);
  });
});

describe('GET /api/v1/runs/:id/trajectory.csv?variant=repaired', () => {
  it('streams the stored gzip as is when accepted, else decoded; 409 for a report recorded without one', async () => {
    const a = queuedRun(1);
    await post(`/api/v1/runs/${a.id}/analysis`, { job_key: a.jobKey, report: report({ score: 90, verdict: 'sound' }), repaired_csv_gz_base64: gzipSync(CSV).toString('base64') });
    const url = `/api/v1/runs/${a.id}/trajectory.csv?variant=repaired`;
    const gz = await t.app.inject({ method: 'GET', url, headers: { authorization: `Bearer ${t.tokens.lead}`, 'accept-encoding': 'br;q=1, gzip;q=0.5' } });
    expect(gz.statusCode).toBe(200);
    expect(gz.headers['content-encoding']).toBe('gzip');
    expect(gz.rawPayload.subarray(0, 2)).toEqual(Buffer.from([0x1f, 0x8b]));
    const plain = await t.app.inject({ method: 'GET', url, headers: { authorization: `Bearer ${t.tokens.lead}`, 'accept-encoding': 'identity' } });
    expect(plain.headers['content-encoding']).toBeUndefined();
    expect(plain.headers['content-type']).toMatch(/^text\/csv/);
    expect(plain.payload).toBe(CSV);
    const b = queuedRun(2);
    t.store.reports.recordAnalysis(b.id, report({ score: 90, verdict: 'sound' }), b.jobKey);
    const missing = await t.app.inject({ method: 'GET', url: `/api/v1/runs/${b.id}/trajectory.csv?variant=repaired`, headers: { authorization: `Bearer ${t.tokens.lead}` } });
    expect(missing.statusCode).toBe(409);
    expect(missing.json()).toMatchObject({ code: 'TRAJECTORY_NOT_STORED' });
  });
});

describe('acceptsGzip (RFC 9110 §12.5.3 Accept-Encoding)', () => {
  it('reads codings and weights', () => {
    expect(acceptsGzip('gzip, deflate, br')).toBe(true);
    expect(acceptsGzip('*')).toBe(true);
    expect(acceptsGzip('gzip;q=0')).toBe(false);
    expect(acceptsGzip('identity')).toBe(false);
    expect(acceptsGzip(undefined)).toBe(false);
    expect(acceptsGzip('br, GZIP;q=0.3')).toBe(true);
  });
});
