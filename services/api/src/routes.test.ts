import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from './testing.ts';

let t: TestApp;
let mine: string;
let theirs: string;
beforeAll(async () => {
  t = await createTestApp();
  const mk = (robot: string, run: string, c: string) =>
    t.store.runs.create({ robot_id: robot, run_id: run, site: 'harbourside-depot', started_at: '2026-11-30T06:00:00Z', sha256: c.repeat(64), size_bytes: 100 }).run.id;
  mine = mk('kestrel-01', 'shift-1', 'a');
  theirs = mk('plover-01', 'shift-1', 'b');
});
afterAll(async () => t.close());

const get = (url: string, role: keyof TestApp['tokens']) => t.app.inject({ method: 'GET', url, headers: { authorization: `Bearer ${t.tokens[role]}` } });

describe('robot visibility', () => {
  it('lists only the robot\'s own runs and hides others as 404', async () => {
    const list = await get('/api/v1/runs', 'robot');
    expect(list.json().items.map((r: { id: string }) => r.id)).toEqual([mine]);
    const other = await get('/api/v1/runs?robot_id=plover-01', 'robot');
    expect(other.json().items.map((r: { id: string }) => r.id)).toEqual([mine]);
    expect((await get(`/api/v1/runs/${theirs}`, 'robot')).statusCode).toBe(404);
    expect((await get('/api/v1/robots/plover-01/runs', 'robot')).json().code).toBe('ROBOT_NOT_FOUND');
    const lead = await get('/api/v1/runs', 'lead');
    expect(lead.json().items).toHaveLength(2);
  });
  it('answers 409 REPORT_NOT_READY for a run without a report', async () => {
    const r = await get(`/api/v1/runs/${mine}/report`, 'lead');
    expect(r.statusCode).toBe(409);
    expect(r.json()).toMatchObject({ code: 'REPORT_NOT_READY' });
    const d = await get(`/api/v1/runs/${mine}`, 'lead');
    expect(d.json()).toMatchObject({ summary: { id: mine }, report: null, reviews: [] });
  });
});

describe('reviews', () => {
  it('records a decision, refuses flags the report does not have, and queues run.reviewed', async () => {
    const hook = t.store.webhooks.create({ url: 'http://127.0.0.1:9/h', events: ['run.reviewed'], secret: 's'.repeat(20) });
    const auth = { authorization: `Bearer ${t.tokens.lead}` };
    const bad = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${mine}/reviews`, headers: auth, payload: { decision: 'reject', flags: [{ flag_id: 'pose-jump-1', disposition: 'upheld' }] } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().detail).toMatch(/pose-jump-1/);
    const ok = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${mine}/reviews`, headers: auth, payload: { decision: 'rerun', note: 'camera fogged' } });
    expect(ok.statusCode).toBe(201);
    expect(ok.json()).toMatchObject({ decision: 'rerun', note: 'camera fogged', reviewer: 'lead:ops-lead' });
    expect((await get(`/api/v1/runs/${mine}/reviews`, 'robot')).json()).toHaveLength(1);
    expect(t.store.webhooks.deliveries(hook.id)).toHaveLength(1);
    const audit = await get(`/api/v1/runs/${mine}/audit`, 'lead');
    expect(audit.json().map((a: { action: string }) => a.action)).toContain('run.reviewed');
  });
});

describe('tokens over HTTP', () => {
  it('creates a token shown once, lists it without the secret, and revokes it at once', async () => {
    const admin = { authorization: `Bearer ${t.tokens.admin}` };
    const made = await t.app.inject({ method: 'POST', url: '/api/v1/tokens', headers: admin, payload: { role: 'robot', name: 'wren-01', robot_id: 'wren-01' } });
    expect(made.statusCode).toBe(201);
    const { token, info } = made.json();
    expect(token).toMatch(/^plb_/);
    const list = await t.app.inject({ method: 'GET', url: '/api/v1/tokens', headers: admin });
    expect(list.body).not.toContain(token);
    const me = await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: { authorization: `Bearer ${token}` } });
    expect(me.json()).toEqual({ role: 'robot', name: 'wren-01', robot_id: 'wren-01' });
    expect((await t.app.inject({ method: 'DELETE', url: `/api/v1/tokens/${info.id}`, headers: admin })).statusCode).toBe(204);
    expect((await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: { authorization: `Bearer ${token}` } })).statusCode).toBe(401);
    const noRobot = await t.app.inject({ method: 'POST', url: '/api/v1/tokens', headers: admin, payload: { role: 'robot', name: 'x' } });
    expect(noRobot.statusCode).toBe(400);
  });
});

describe('re-analysis', () => {
  it('queues one run or every run matching a filter', async () => {
    const admin = { authorization: `Bearer ${t.tokens.admin}` };
    const one = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${theirs}/reanalyse`, headers: admin, payload: {} });
    expect(one.statusCode).toBe(202);
    expect(one.json().run.status).toBe('queued');
    const many = await t.app.inject({ method: 'POST', url: '/api/v1/reanalyse', headers: admin, payload: { site: 'harbourside-depot' } });
    expect(many.statusCode).toBe(202);
    expect(many.json()).toEqual({ queued: 2 });
  });
});
