/**
 * Access and secrets across a whole session (the role x route matrix itself, derived from the OpenAPI document,
 * is services/api/src/auth-matrix.test.ts): robot isolation, hashed tokens, immediate revocation, rate limits,
 * size limits, security headers, closed CORS, signed webhooks with replay protection, and logs free of every token
 * and secret used.
 */
import { createHmac, timingSafeEqual } from 'node:crypto';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Writable } from 'node:stream';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { REDACT_PATHS } from '../../services/api/src/logger.ts';
import { smallBundle } from './fault-kit.ts';
import { startLiveApp, until, writeFigures, type LiveApp } from './harness.ts';

const SECRET = 'whsec-saltmarsh-0f3c9a7e5d1b2468ace';
const logLines: string[] = [];
const sink = new Writable({ write(chunk: Buffer, _enc, cb) { logLines.push(chunk.toString()); cb(); } });

interface Delivery { raw: string; signature: string; receivedAtS: number }
const deliveries: Delivery[] = [];
let receiver: Server;
let receiverUrl = '';

/** What an integrator does with `Plumbline-Signature: t=<unix s>,v1=<hex HMAC-SHA256 of "t.body">`: 5-minute window. */
function verify(secret: string, header: string, raw: string, nowS: number): boolean {
  const m = /^t=(\d+),v1=([0-9a-f]{64})$/.exec(header);
  if (!m) return false;
  if (Math.abs(nowS - Number(m[1])) > 300) return false;
  const mac = createHmac('sha256', secret).update(`${m[1]}.${raw}`).digest();
  return timingSafeEqual(mac, Buffer.from(m[2]!, 'hex'));
}

let t: LiveApp;
const secrets: string[] = [SECRET];
const H = (token: string) => ({ authorization: `Bearer ${token}` });

beforeAll(async () => {
  receiver = createServer((req, res) => {
    let raw = '';
    req.on('data', (c: Buffer) => (raw += c.toString()));
    req.on('end', () => {
      deliveries.push({ raw, signature: String(req.headers['plumbline-signature']), receivedAtS: Math.floor(Date.now() / 1000) });
      res.statusCode = 204;
      res.end();
    });
  });
  await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
  receiverUrl = `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/hooks`;
  t = await startLiveApp(
    { PLUMBLINE_UPLOAD_RATE_PER_MIN: '4', PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN: '6' },
    pino({ level: 'debug', redact: { paths: REDACT_PATHS, censor: '[redacted]' } }, sink),
  );
  secrets.push(...Object.values(t.tokens));
}, 60_000);

afterAll(async () => {
  await t?.close();
  await new Promise((r) => receiver.close(r));
});

describe('a robot token', () => {
  it('cannot upload as another robot, read its runs or raw bundle, or review', async () => {
    const other = t.store.tokens.create({ role: 'robot', name: 'plover-02', robot_id: 'plover-02' }).token;
    secrets.push(other);
    const up = await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...H(other), 'content-type': 'application/gzip' }, payload: await smallBundle('plover-shift', 'plover-02') });
    expect(up.statusCode, up.body).toBe(201);
    const id = up.json().run.id as string;
    const mine = H(t.tokens.robot);
    expect((await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...mine, 'content-type': 'application/gzip' }, payload: await smallBundle('x', 'plover-02') })).json().code).toBe('ROBOT_MISMATCH');
    for (const url of [`/api/v1/runs/${id}`, `/api/v1/runs/${id}/bundle`, `/api/v1/runs/${id}/report`, `/api/v1/runs/${id}/reviews`, '/api/v1/robots/plover-02/runs']) {
      const r = await t.app.inject({ method: 'GET', url, headers: mine });
      expect(r.statusCode, url).toBe(404);
    }
    const listed = await t.app.inject({ method: 'GET', url: '/api/v1/runs', headers: mine });
    expect(listed.json().items.map((r: { robot_id: string }) => r.robot_id)).not.toContain('plover-02');
    const review = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${id}/reviews`, headers: mine, payload: { decision: 'accept' } });
    expect(review.statusCode).toBe(403);
  });
});

describe('tokens', () => {
  it('are stored hashed and a revocation takes effect on the next request', async () => {
    const created = await t.app.inject({ method: 'POST', url: '/api/v1/tokens', headers: H(t.tokens.admin), payload: { role: 'lead', name: 'night-shift' } });
    expect(created.statusCode).toBe(201);
    const { token, info } = created.json() as { token: string; info: { id: string } };
    secrets.push(token);
    const rows = JSON.stringify(t.db.prepare('SELECT * FROM api_tokens').all());
    for (const s of secrets.filter((x) => x !== SECRET)) expect(rows).not.toContain(s);
    expect((await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: H(token) })).statusCode).toBe(200);
    expect((await t.app.inject({ method: 'DELETE', url: `/api/v1/tokens/${info.id}`, headers: H(t.tokens.admin) })).statusCode).toBe(204);
    const after = await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: H(token) });
    expect(after.statusCode).toBe(401);
  });
});

describe('limits and headers', () => {
  it('rate-limits uploads per token with Retry-After', async () => {
    const admin = H(t.store.tokens.create({ role: 'admin', name: 'uploader' }).token);
    const codes: number[] = [];
    for (let i = 0; i < 6; i++) {
      const r = await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...admin, 'content-type': 'application/gzip' }, payload: await smallBundle(`burst-${i}`) });
      codes.push(r.statusCode);
      if (r.statusCode === 429) expect(Number(r.headers['retry-after'])).toBeGreaterThan(0);
    }
    // Bucket of 4 per minute (PLUMBLINE_UPLOAD_RATE_PER_MIN): four accepted, then refused.
    expect(codes).toEqual([201, 201, 201, 201, 429, 429]);
  });
  it('rate-limits failed authentications per address', async () => {
    const codes: number[] = [];
    for (let i = 0; i < 8; i++) {
      const bogus = `plb_guess${i}_${'A'.repeat(43)}`;
      secrets.push(bogus);
      codes.push((await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: { ...H(bogus), 'x-forwarded-for': '203.0.113.9' }, remoteAddress: '127.0.0.9' })).statusCode);
    }
    expect(codes.slice(0, 6)).toEqual([401, 401, 401, 401, 401, 401]);
    expect(codes.slice(6)).toEqual([429, 429]);
  });
  it('refuses JSON bodies over 1 MiB with 413', async () => {
    const r = await t.app.inject({ method: 'POST', url: '/api/v1/runs/x/reviews', headers: { ...H(t.tokens.lead), 'content-type': 'application/json' }, payload: JSON.stringify({ decision: 'accept', note: 'x'.repeat(1_100_000) }) });
    expect(r.statusCode).toBe(413);
    expect(r.headers['content-type']).toMatch(/problem\+json/);
  });
  it('sends security headers and no CORS grant to an unknown origin', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/api/v1/me', headers: { ...H(t.tokens.lead), origin: 'https://elsewhere.example' } });
    expect(r.headers).toMatchObject({ 'x-content-type-options': 'nosniff', 'x-frame-options': 'DENY', 'referrer-policy': 'no-referrer' });
    expect(String(r.headers['content-security-policy'])).toContain("default-src 'self'");
    expect(r.headers['access-control-allow-origin']).toBeUndefined();
    const pre = await t.app.inject({ method: 'OPTIONS', url: '/api/v1/runs', headers: { origin: 'https://elsewhere.example', 'access-control-request-method': 'POST' } });
    expect(pre.headers['access-control-allow-origin']).toBeUndefined();
    expect(pre.headers['access-control-allow-methods']).toBeUndefined();
  });
});

describe('webhooks', () => {
  it('arrive signed; a tampered body, another secret or a replay after 5 minutes is refused by the receiver', async () => {
    const hook = await t.app.inject({ method: 'POST', url: '/api/v1/webhooks', headers: H(t.tokens.integrator), payload: { url: receiverUrl, events: ['run.analysed'], secret: SECRET } });
    expect(hook.statusCode, hook.body).toBe(201);
    const up = await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...H(t.tokens.robot), 'content-type': 'application/gzip' }, payload: await smallBundle('signed-hook') });
    expect(up.statusCode, up.body).toBe(201);
    const d = await until('a delivery', () => deliveries.find((x) => x.raw.includes('signed-hook')), 60_000);
    expect(verify(SECRET, d.signature, d.raw, d.receivedAtS)).toBe(true);
    expect(verify(SECRET, d.signature, d.raw.replace('signed-hook', 'signed-hooK'), d.receivedAtS)).toBe(false);
    expect(verify('another-secret-of-32-characters!!', d.signature, d.raw, d.receivedAtS)).toBe(false);
    expect(verify(SECRET, d.signature, d.raw, d.receivedAtS + 301)).toBe(false);
    // Moving the timestamp forward to dodge the window breaks the MAC.
    const ts = Number(/t=(\d+)/.exec(d.signature)![1]);
    expect(verify(SECRET, d.signature.replace(`t=${ts}`, `t=${ts + 600}`), d.raw, d.receivedAtS + 600)).toBe(false);
  }, 90_000);
});

describe('logs', () => {
  it('never contain a token or webhook secret used in the session', async () => {
    await until('some log output', () => logLines.length > 20);
    const text = logLines.join('');
    const leaked = secrets.filter((s) => text.includes(s));
    expect(leaked).toEqual([]);
    // The session was logged (requests that carried tokens and the webhook secret, refusals, the worker).
    expect(text).toContain('/api/v1/webhooks');
    expect(text).toContain('/api/v1/tokens');
    expect(text).toContain('request refused');
    await writeFigures('access', { log_lines: logLines.length, secrets_checked: secrets.length, leaked: leaked.length });
  });
});
