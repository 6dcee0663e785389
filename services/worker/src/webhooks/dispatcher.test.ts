import { createHmac, timingSafeEqual } from 'node:crypto';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import pino from 'pino';
import { createStore, openDatabase, type Db, type Store } from '@plumbline/store';
import { signatureHeader, startWebhookDispatcher } from './dispatcher.ts';

// HMAC-SHA256 test vector: RFC 4231, test case 2 (key "Jefe", data "what do ya want for nothing?").
describe('signatureHeader', () => {
  it('signs "<t>.<body>" with HMAC-SHA256', () => {
    // The primitive on the published vector, then the header layout built on it.
    expect(createHmac('sha256', 'Jefe').update('what do ya want for nothing?').digest('hex')).toBe(
      '5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843',
    );
    const h = signatureHeader('Jefe', 1764576000, '{"a":1}');
    expect(h).toBe(`t=1764576000,v1=${createHmac('sha256', 'Jefe').update('1764576000.{"a":1}').digest('hex')}`);
  });
});

let db: Db;
let store: Store;
let server: Server;
let url: string;
let received: Array<{ ok: boolean; event: string; body: string }>;
let answer = 200;
const SECRET = 'a-very-secret-value-0123';

beforeEach(async () => {
  db = openDatabase(':memory:');
  store = createStore(db);
  received = [];
  answer = 200;
  // A receiver that checks the signature the way integrators are told to: recompute, compare in constant time,
  // refuse timestamps older than 5 minutes.
  server = createServer((req, res) => {
    let body = '';
    req.setEncoding('utf8');
    req.on('data', (c: string) => (body += c));
    req.on('end', () => {
      const m = /^t=(\d+),v1=([0-9a-f]{64})$/.exec(String(req.headers['plumbline-signature']));
      const expected = m ? createHmac('sha256', SECRET).update(`${m[1]}.${body}`).digest() : null;
      const fresh = m ? Math.abs(Date.parse('2026-12-01T08:00:00Z') / 1000 - Number(m[1])) <= 300 : false;
      const ok = !!m && !!expected && fresh && timingSafeEqual(expected, Buffer.from(m[2] ?? '', 'hex'));
      received.push({ ok, event: String(req.headers['plumbline-event']), body });
      res.statusCode = ok ? answer : 400;
      res.end();
    });
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  url = `http://127.0.0.1:${(server.address() as AddressInfo).port}/hook`;
});
afterEach(async () => {
  db.close();
  await new Promise((r) => server.close(r));
});

describe('dispatcher', () => {
  it('delivers a signed event once', async () => {
    const hook = store.webhooks.create({ url, events: ['run.analysed'], secret: SECRET });
    const now = new Date('2026-12-01T08:00:00Z');
    expect(store.webhooks.enqueueEvent('run.analysed', { event: 'run.analysed', n: 1 }, now)).toBe(1);
    const d = startWebhookDispatcher({ webhooks: store.webhooks, logger: pino({ level: 'silent' }), clock: { now: () => now }, intervalMs: 60_000 });
    expect(await d.tick()).toBe(1);
    expect(await d.tick()).toBe(0);
    await d.stop();
    expect(received).toEqual([{ ok: true, event: 'run.analysed', body: '{"event":"run.analysed","n":1}' }]);
    expect(store.webhooks.deliveries(hook.id)[0]).toMatchObject({ status: 'delivered', attempts: 1, last_status_code: 200 });
  });
  it('retries a refused delivery later with backoff', async () => {
    const hook = store.webhooks.create({ url, events: ['run.reviewed'], secret: SECRET });
    let nowMs = Date.parse('2026-12-01T08:00:00Z');
    store.webhooks.enqueueEvent('run.reviewed', { x: 1 }, new Date(nowMs));
    const d = startWebhookDispatcher({ webhooks: store.webhooks, logger: pino({ level: 'silent' }), clock: { now: () => new Date(nowMs) }, intervalMs: 60_000 });
    answer = 503;
    expect(await d.tick()).toBe(1);
    const after1 = store.webhooks.deliveries(hook.id)[0];
    expect(after1).toMatchObject({ status: 'pending', attempts: 1, last_status_code: 503 });
    expect(await d.tick()).toBe(0); // not due yet
    answer = 200;
    nowMs = Date.parse(after1?.next_attempt_at ?? '') + 1;
    expect(await d.tick()).toBe(1);
    await d.stop();
    expect(store.webhooks.deliveries(hook.id)[0]).toMatchObject({ status: 'delivered', attempts: 2 });
  });
});
