import { createHash } from 'node:crypto';
import { connect } from 'node:net';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { inspectBundle } from '@plumbline/bundle';
import { createTestApp, type TestApp } from './testing.ts';
import { testBundle } from './test-bundles.ts';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp({ inspectBundle, env: { PLUMBLINE_UPLOAD_RATE_PER_MIN: '1000' } });
});
afterAll(async () => t.close());

const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const auth = (role: keyof TestApp['tokens']) => ({ authorization: `Bearer ${t.tokens[role]}` });

function postRun(body: Buffer, role: keyof TestApp['tokens'] = 'robot') {
  return t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...auth(role), 'content-type': 'application/gzip' }, payload: body });
}

describe('one-shot upload', () => {
  it('stores, creates and queues a run; a re-send is idempotent; other content under the same run id conflicts', async () => {
    const b = await testBundle({ run_id: 'shift-a' });
    const first = await postRun(b);
    expect(first.statusCode, first.body).toBe(201);
    expect(first.json()).toMatchObject({ created: true, run: { robot_id: 'kestrel-01', run_id: 'shift-a', status: 'queued', sha256: sha(b), size_bytes: b.length } });
    const again = await postRun(b);
    expect(again.statusCode).toBe(200);
    expect(again.json()).toMatchObject({ created: false, run: { id: first.json().run.id } });
    const other = await postRun(await testBundle({ run_id: 'shift-a', site: 'northgate-yard' }));
    expect(other.statusCode).toBe(409);
    expect(other.json().code).toBe('RUN_CONFLICT');
    expect((await t.queue.counts()).waiting).toBe(1);
  });
  it('accepts multipart/form-data with a "bundle" field', async () => {
    const b = await testBundle({ run_id: 'shift-mp' });
    const boundary = '----plumbline-test';
    const body = Buffer.concat([
      Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="bundle"; filename="shift-mp.tar.gz"\r\nContent-Type: application/gzip\r\n\r\n`),
      b,
      Buffer.from(`\r\n--${boundary}--\r\n`),
    ]);
    const r = await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...auth('robot'), 'content-type': `multipart/form-data; boundary=${boundary}` }, payload: body });
    expect(r.statusCode, r.body).toBe(201);
    expect(r.json().run.sha256).toBe(sha(b));
  });
  it('refuses a bundle of another robot with 403 ROBOT_MISMATCH', async () => {
    const b = await testBundle({ robot_id: 'plover-02', run_id: 'x' });
    const r = await postRun(b);
    expect(r.statusCode).toBe(403);
    expect(r.json().code).toBe('ROBOT_MISMATCH');
    // Stored while streaming, then refused: the blob is removed (no run references it).
    expect(await t.blobs.has(sha(b))).toBe(false);
  });
  it('keeps the blob of a refused re-send when an accepted run has the same bytes', async () => {
    const b = await testBundle({ robot_id: 'plover-01', run_id: 'shared-bytes' });
    expect((await postRun(b, 'admin')).statusCode).toBe(201);
    expect((await postRun(b, 'robot')).statusCode).toBe(403);
    expect(await t.blobs.has(sha(b))).toBe(true);
  });
  it('lets an admin upload for any robot', async () => {
    const r = await postRun(await testBundle({ robot_id: 'plover-02', run_id: 'by-admin' }), 'admin');
    expect(r.statusCode).toBe(201);
  });
  it('names file, line and column of a manifest error', async () => {
    const text = '{\n  "format": "plumbline-run/1",\n  "robot_id": kestrel\n}';
    const r = await postRun(await testBundle({}, text));
    expect(r.statusCode).toBe(422);
    expect(r.headers['content-type']).toMatch(/application\/problem\+json/);
    const p = r.json();
    expect(p).toMatchObject({ code: 'BUNDLE_INVALID', type: '/reference#problem-bundle-invalid', file: 'run.json', line: 3 });
    expect(typeof p.column).toBe('number');
    expect(p.bundle_code).toBe('MANIFEST_SYNTAX');
    expect(await t.blobs.has(sha(await testBundle({}, text)))).toBe(false);
  });
  it('refuses bytes that are not an archive and an unsupported content type', async () => {
    const r = await postRun(Buffer.from('hello, this is not an archive'));
    expect(r.statusCode).toBe(422);
    expect(r.json().bundle_code).toBe('BUNDLE_UNSUPPORTED');
    const j = await t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...auth('robot'), 'content-type': 'text/plain' }, payload: 'x' });
    expect(j.statusCode).toBe(415);
    expect(j.json().code).toBe('UNSUPPORTED_MEDIA_TYPE');
  });
  it('refuses a body above the size limit before reading it', async () => {
    const small = await createTestApp({ inspectBundle, env: { PLUMBLINE_MAX_UPLOAD_BYTES: '100' } });
    try {
      const r = await small.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { authorization: `Bearer ${small.tokens.robot}`, 'content-type': 'application/gzip' }, payload: Buffer.alloc(500) });
      expect(r.statusCode).toBe(413);
      expect(r.json().code).toBe('BODY_TOO_LARGE');
    } finally {
      await small.close();
    }
  });
});

async function openSession(b: Buffer, runId: string) {
  const r = await t.app.inject({
    method: 'POST',
    url: '/api/v1/uploads',
    headers: auth('robot'),
    payload: { robot_id: 'kestrel-01', run_id: runId, size_bytes: b.length, sha256: sha(b), filename: `${runId}.tar.gz` },
  });
  expect(r.statusCode, r.body).toBe(201);
  return r.json() as { id: string; received_bytes: number };
}
const put = (id: string, offset: number, bytes: Buffer) =>
  t.app.inject({ method: 'PUT', url: `/api/v1/uploads/${id}?offset=${offset}`, headers: { ...auth('robot'), 'content-type': 'application/octet-stream' }, payload: bytes });

describe('resumable upload', () => {
  it('survives a connection dropped mid-chunk and resumes from the offset the server holds', async () => {
    const b = await testBundle({ run_id: 'shift-resume' });
    const s = await openSession(b, 'shift-resume');
    const half = Math.floor(b.length / 2);
    expect((await put(s.id, 0, b.subarray(0, half))).json().received_bytes).toBe(half);
    // A real socket: send the headers of the next chunk and part of its bytes, then drop the connection.
    const address = await t.app.listen({ port: 0, host: '127.0.0.1' });
    const port = (t.app.server.address() as AddressInfo).port;
    expect(address).toContain(String(port));
    await new Promise<void>((resolve) => {
      const sock = connect(port, '127.0.0.1', () => {
        sock.write(
          `PUT /api/v1/uploads/${s.id}?offset=${half} HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer ${t.tokens.robot}\r\n` +
            `Content-Type: application/octet-stream\r\nContent-Length: ${b.length - half}\r\n\r\n`,
        );
        sock.write(b.subarray(half, half + 10));
        setTimeout(() => sock.destroy(), 100);
      });
      sock.on('close', () => resolve());
    });
    await new Promise((r) => setTimeout(r, 100));
    const state = await t.app.inject({ method: 'GET', url: `/api/v1/uploads/${s.id}`, headers: auth('robot') });
    expect(state.json()).toMatchObject({ state: 'open', received_bytes: half });
    const wrong = await put(s.id, 0, b.subarray(0, 4));
    expect(wrong.statusCode).toBe(409);
    expect(wrong.json()).toMatchObject({ code: 'UPLOAD_OFFSET_MISMATCH', expected_offset: half });
    expect((await put(s.id, half, b.subarray(half))).json().received_bytes).toBe(b.length);
    const fin = await t.app.inject({ method: 'POST', url: `/api/v1/uploads/${s.id}/finish`, headers: auth('robot') });
    expect(fin.statusCode, fin.body).toBe(201);
    expect(fin.json().run).toMatchObject({ run_id: 'shift-resume', sha256: sha(b), status: 'queued' });
    const again = await t.app.inject({ method: 'POST', url: `/api/v1/uploads/${s.id}/finish`, headers: auth('robot') });
    expect(again.statusCode).toBe(200);
    expect(again.json().created).toBe(false);
  });
  it('refuses to finish early, refuses bytes past the declared size, and fails a wrong checksum with 422', async () => {
    const b = await testBundle({ run_id: 'shift-bad' });
    const s = await openSession(Buffer.concat([b.subarray(0, b.length - 1), Buffer.from([b[b.length - 1]! ^ 0xff])]), 'shift-bad');
    expect((await put(s.id, 0, b.subarray(0, 10))).statusCode).toBe(200);
    const early = await t.app.inject({ method: 'POST', url: `/api/v1/uploads/${s.id}/finish`, headers: auth('robot') });
    expect(early.statusCode).toBe(409);
    expect(early.json()).toMatchObject({ code: 'UPLOAD_INCOMPLETE', expected_offset: 10 });
    const over = await put(s.id, 10, Buffer.concat([b.subarray(10), Buffer.from('extra')]));
    expect(over.statusCode).toBe(413);
    expect((await put(s.id, 10, b.subarray(10))).statusCode).toBe(200);
    const fin = await t.app.inject({ method: 'POST', url: `/api/v1/uploads/${s.id}/finish`, headers: auth('robot') });
    expect(fin.statusCode).toBe(422);
    expect(fin.json().code).toBe('CHECKSUM_MISMATCH');
  });
  it('lets the owner abort a session, after which chunks are refused', async () => {
    const b = await testBundle({ run_id: 'shift-abort' });
    const s = await openSession(b, 'shift-abort');
    const del = await t.app.inject({ method: 'DELETE', url: `/api/v1/uploads/${s.id}`, headers: auth('robot') });
    expect(del.statusCode).toBe(204);
    expect((await put(s.id, 0, b)).json().code).toBe('UPLOAD_CLOSED');
  });
});
