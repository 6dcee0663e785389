import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from './testing.ts';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => t.close());

describe('problem+json', () => {
  it('answers an unknown route with a 404 problem', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/api/v1/nothing-here' });
    expect(r.statusCode).toBe(404);
    expect(r.headers['content-type']).toMatch(/^application\/problem\+json/);
    const body = r.json();
    expect(body).toMatchObject({ status: 404, code: 'ROUTE_NOT_FOUND', type: '/reference#problem-route-not-found', instance: '/api/v1/nothing-here' });
  });
  it('answers a missing token with 401 and a WWW-Authenticate header', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/api/v1/runs' });
    expect(r.statusCode).toBe(401);
    expect(r.headers['www-authenticate']).toMatch(/^Bearer/);
    expect(r.json().code).toBe('UNAUTHENTICATED');
  });
  it('names the bad field of a query', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/api/v1/runs?limit=0', headers: { authorization: `Bearer ${t.tokens.lead}` } });
    expect(r.statusCode).toBe(400);
    expect(r.json()).toMatchObject({ code: 'VALIDATION_FAILED' });
    expect(r.json().detail).toMatch(/limit/);
    expect(r.json().issues[0].path).toBe('limit');
  });
  it('refuses malformed JSON as a 400 problem', async () => {
    const r = await t.app.inject({
      method: 'POST',
      url: '/api/v1/webhooks',
      headers: { authorization: `Bearer ${t.tokens.integrator}`, 'content-type': 'application/json' },
      payload: '{"url":',
    });
    expect(r.statusCode).toBe(400);
    expect(r.json().code).toBe('VALIDATION_FAILED');
  });
});

describe('request ids and headers', () => {
  it('echoes a well-formed x-request-id and replaces a malformed one', async () => {
    const a = await t.app.inject({ method: 'GET', url: '/healthz', headers: { 'x-request-id': 'abc-123' } });
    expect(a.headers['x-request-id']).toBe('abc-123');
    const b = await t.app.inject({ method: 'GET', url: '/healthz', headers: { 'x-request-id': 'bad id\nwith newline' } });
    expect(b.headers['x-request-id']).toMatch(/^[0-9a-f-]{36}$/);
  });
  it('sets security headers and no CORS header for foreign origins', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/healthz', headers: { origin: 'https://elsewhere.example' } });
    expect(r.headers['x-content-type-options']).toBe('nosniff');
    expect(r.headers['x-frame-options']).toBe('DENY');
    expect(r.headers['content-security-policy']).toContain("default-src 'self'");
    expect(r.headers['access-control-allow-origin']).toBeUndefined();
  });
});

describe('operations routes', () => {
  it('reports ready when database and queue answer', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/readyz' });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toEqual({ status: 'ready', database: true, queue: true });
  });
  it('exposes Prometheus text with the request histogram and queue gauge', async () => {
    await t.app.inject({ method: 'GET', url: '/healthz' });
    const r = await t.app.inject({ method: 'GET', url: '/metrics' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/plain; version=0\.0\.4/);
    expect(r.body).toMatch(/plumbline_http_request_duration_seconds_bucket\{method="GET",route="\/healthz",status="200",le="\+Inf"\} [1-9]/);
    expect(r.body).toMatch(/plumbline_queue_jobs\{state="waiting"\} 0/);
    expect(r.body).toMatch(/^plumbline_queue_depth 0$/m);
  });
});

describe('rate limit on failed authentication', () => {
  it('answers 429 once an address has failed too often', async () => {
    const small = await createTestApp({ env: { PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN: '3' } });
    try {
      const codes: number[] = [];
      for (let i = 0; i < 5; i++) {
        const r = await small.app.inject({ method: 'GET', url: '/api/v1/me', headers: { authorization: 'Bearer plb_nope_x' } });
        codes.push(r.statusCode);
      }
      expect(codes).toEqual([401, 401, 401, 429, 429]);
      const ok = await small.app.inject({ method: 'GET', url: '/api/v1/me', headers: { authorization: `Bearer ${small.tokens.lead}` } });
      expect(ok.statusCode).toBe(429);
      small.clock.advance(60_000);
      const later = await small.app.inject({ method: 'GET', url: '/api/v1/me', headers: { authorization: `Bearer ${small.tokens.lead}` } });
      expect(later.statusCode).toBe(200);
    } finally {
      await small.close();
    }
  });
});

describe('readiness', () => {
  it('answers 503 with the failing part when the queue does not answer', async () => {
    const { createEmbeddedQueue } = await import('@plumbline/queue');
    const down = await createTestApp({
      makeQueue: (db) => Object.assign(createEmbeddedQueue(db), { ping: async () => false }),
    });
    try {
      const r = await down.app.inject({ method: 'GET', url: '/readyz' });
      expect(r.statusCode).toBe(503);
      expect(r.json()).toMatchObject({ code: 'NOT_READY', database: true, queue: false });
    } finally {
      await down.close();
    }
  });
});

describe('rate limit on uploads', () => {
  it('answers 429 with Retry-After past the per-token limit', async () => {
    const small = await createTestApp({ env: { PLUMBLINE_UPLOAD_RATE_PER_MIN: '2' } });
    try {
      const open = () =>
        small.app.inject({
          method: 'POST',
          url: '/api/v1/uploads',
          headers: { authorization: `Bearer ${small.tokens.robot}` },
          payload: { robot_id: 'kestrel-01', run_id: 'r', size_bytes: 10, sha256: 'd'.repeat(64) },
        });
      expect([(await open()).statusCode, (await open()).statusCode]).toEqual([201, 201]);
      const third = await open();
      expect(third.statusCode).toBe(429);
      // 2 per minute: one token every 30 s.
      expect(third.headers['retry-after']).toBe('30');
      expect(third.json().code).toBe('RATE_LIMITED');
    } finally {
      await small.close();
    }
  });
});
