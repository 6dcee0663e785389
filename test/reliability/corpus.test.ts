/**
 * The malformed-bundle corpus (test/corpus/) through the HTTP API: every case gets its expected outcome, runs
 * stored before are untouched (rows and blob bytes hashed before and after), the server stays up and memory stays
 * bounded. Bundles are analysed by the real analysis in the embedded worker.
 */
import { existsSync } from 'node:fs';
import { connect } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildCorpus, CORPUS_MAX_UPLOAD_BYTES, type CorpusCase } from '../corpus/generate.ts';
import { entriesOf, runFiles, tarGz } from '../corpus/builders.ts';
import { countBy, fingerprint, hashFile, listFiles, sha256, startLiveApp, TERMINAL, until, writeFigures, type LiveApp } from './harness.ts';

let t: LiveApp;
let cases: CorpusCase[];
const baseline: string[] = [];
const auth = (role: 'robot' | 'admin' | 'lead' = 'robot') => ({ authorization: `Bearer ${t.tokens[role]}` });

type Res = Awaited<ReturnType<LiveApp['app']['inject']>>;

function post(bytes: Buffer, contentType = 'application/gzip', role: 'robot' | 'admin' = 'robot'): Promise<Res> {
  return t.app.inject({ method: 'POST', url: '/api/v1/runs', headers: { ...auth(role), 'content-type': contentType }, payload: bytes });
}

async function session(k: CorpusCase, step: string): Promise<Res> {
  const runId = `corpus-${k.id}`;
  const open = (over: Record<string, unknown> = {}) =>
    t.app.inject({ method: 'POST', url: '/api/v1/uploads', headers: auth(), payload: { robot_id: 'kestrel-01', run_id: runId, size_bytes: k.bytes.length, sha256: sha256(k.bytes), ...over } });
  const put = (id: string, offset: number, bytes: Buffer) =>
    t.app.inject({ method: 'PUT', url: `/api/v1/uploads/${id}?offset=${offset}`, headers: { ...auth(), 'content-type': 'application/octet-stream' }, payload: bytes });
  const finish = (id: string) => t.app.inject({ method: 'POST', url: `/api/v1/uploads/${id}/finish`, headers: auth() });
  const opened = async (over: Record<string, unknown> = {}) => {
    const r = await open(over);
    expect(r.statusCode, r.body).toBe(201);
    return r.json().id as string;
  };
  switch (step) {
    case 'wrong-offset':
      return put(await opened(), 100, k.bytes.subarray(100));
    case 'wrong-checksum': {
      const id = await opened({ sha256: sha256('other bytes') });
      expect((await put(id, 0, k.bytes)).statusCode).toBe(200);
      return finish(id);
    }
    case 'past-size':
      return put(await opened({ size_bytes: k.bytes.length - 100 }), 0, k.bytes);
    case 'finish-early': {
      const id = await opened();
      expect((await put(id, 0, k.bytes.subarray(0, 1000))).statusCode).toBe(200);
      return finish(id);
    }
    case 'declared-over-limit':
      return open({ size_bytes: CORPUS_MAX_UPLOAD_BYTES + 1 });
    case 'other-robot':
      return open({ robot_id: 'plover-02' });
    case 'manifest-mismatch': {
      const id = await opened({ run_id: 'corpus-some-other-run' });
      expect((await put(id, 0, k.bytes)).statusCode).toBe(200);
      return finish(id);
    }
    case 'bad-sha':
      return open({ sha256: 'not-a-digest' });
    default:
      throw new Error(`unknown session step ${step}`);
  }
}

function send(k: CorpusCase): Promise<Res> {
  if (k.upload.via === 'session') return session(k, k.upload.step);
  return post(k.bytes, k.upload.contentType, k.upload.role);
}

const rss = () => process.memoryUsage().rss;
const results: Array<{ id: string; outcome: string }> = [];
let rssBefore = 0;
let before: Record<string, string>;
let orphanBlobs = 0;

beforeAll(async () => {
  t = await startLiveApp({ PLUMBLINE_MAX_UPLOAD_BYTES: String(CORPUS_MAX_UPLOAD_BYTES) });
  cases = await buildCorpus();
  // Runs stored before the corpus arrives: analysed, one reviewed.
  for (const name of ['baseline-a', 'baseline-b', 'baseline-c']) {
    const r = await post(await tarGz(entriesOf(runFiles(name))));
    expect(r.statusCode, r.body).toBe(201);
    baseline.push(r.json().run.id);
  }
  await until('baseline analysed', () => baseline.every((id) => t.store.runs.get(id)?.status === 'done'));
  const rev = await t.app.inject({ method: 'POST', url: `/api/v1/runs/${baseline[0]}/reviews`, headers: auth('lead'), payload: { decision: 'accept', note: 'baseline' } });
  expect(rev.statusCode, rev.body).toBe(201);
  before = await fingerprint(t.db, t.blobs.dir, baseline);
  rssBefore = rss();
}, 120_000);

afterAll(async () => {
  await t?.close();
});

describe('malformed bundle corpus', () => {
  it('has at least 60 cases with unique ids', () => {
    expect(cases.length).toBeGreaterThanOrEqual(60);
    expect(new Set(cases.map((k) => k.id)).size).toBe(cases.length);
  });

  it('gives every case its expected outcome', async () => {
    const accepted: Array<{ k: CorpusCase; runId: string }> = [];
    const failures: string[] = [];
    for (const k of cases) {
      const r = await send(k);
      const e = k.expect;
      const body = r.body ? (r.json() as Record<string, unknown>) : {};
      const got = `${r.statusCode} ${String(body.code ?? '')}${body.bundle_code ? `/${String(body.bundle_code)}` : ''}`;
      if (e.kind === 'problem') {
        const ok =
          r.statusCode === e.status &&
          String(r.headers['content-type']).startsWith('application/problem+json') &&
          body.code === e.code &&
          (e.bundle_code === undefined || body.bundle_code === e.bundle_code) &&
          (e.file === undefined || body.file === e.file) &&
          (e.line === undefined || body.line === e.line) &&
          (e.column === undefined || body.column === e.column) &&
          (!e.located || (typeof body.line === 'number' && typeof body.column === 'number')) &&
          // A named file is one the client knows: a bundle entry or the upload itself, never a server storage name.
          (body.file === undefined || body.file === '(upload)' || /^[\w./-]{1,64}$/.test(String(body.file))) &&
          (body.code !== 'BUNDLE_INVALID' || !/[0-9a-f]{40}/.test(String(body.detail)));
        if (!ok) failures.push(`${k.id}: expected ${e.status} ${e.code}/${e.bundle_code ?? ''} ${e.file ?? ''}:${e.line ?? ''}:${e.column ?? ''}, got ${r.body.slice(0, 300)}`);
        results.push({ id: k.id, outcome: got });
      } else if (r.statusCode !== 201) {
        failures.push(`${k.id}: expected the upload to be stored, got ${r.body.slice(0, 300)}`);
      } else {
        accepted.push({ k, runId: (body.run as { id: string }).id });
      }
    }
    await until('corpus analyses', () => accepted.every(({ runId }) => TERMINAL.has(t.store.runs.get(runId)?.status ?? '')), 120_000, 100);
    const rejectedDetail = t.db.prepare("SELECT detail_json FROM audit_log WHERE action = 'run.rejected' AND subject = ?").pluck();
    for (const { k, runId } of accepted) {
      const run = t.store.runs.get(runId)!;
      const e = k.expect;
      if (e.kind === 'done') {
        if (run.status !== 'done') failures.push(`${k.id}: expected done, got ${run.status} (${run.status_reason})`);
        else if (e.notVerdict && run.verdict === e.notVerdict) failures.push(`${k.id}: the analysis called it ${run.verdict}`);
        results.push({ id: k.id, outcome: `201 -> ${run.status} ${run.verdict ?? ''}` });
        continue;
      }
      if (e.kind !== 'rejected') continue;
      const d = JSON.parse(String(rejectedDetail.get(runId) ?? '{}')) as Record<string, unknown>;
      const ok =
        run.status === 'rejected' &&
        d.code === e.bundle_code &&
        d.file === e.file &&
        (e.line === undefined || d.line === e.line) &&
        (e.column === undefined || d.column === e.column) &&
        typeof run.status_reason === 'string' &&
        run.status_reason.startsWith(e.file);
      if (!ok) failures.push(`${k.id}: expected rejected ${e.bundle_code} ${e.file}:${e.line ?? ''}:${e.column ?? ''}, got ${run.status} ${JSON.stringify(d)} "${run.status_reason}"`);
      results.push({ id: k.id, outcome: `201 -> ${run.status} ${String(d.code ?? '')}` });
    }
    expect(failures).toEqual([]);
  }, 240_000);

  it('answers a chunked body (no Content-Length) running past the limit with 413 over a real socket', async () => {
    const base = await t.app.listen({ port: 0, host: '127.0.0.1' });
    const port = Number(new URL(base).port);
    const chunk = Buffer.alloc(64 * 1024, 0x5a);
    const answer = await new Promise<string>((resolve) => {
      const sock = connect(port, '127.0.0.1', () => {
        sock.write(`POST /api/v1/runs HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer ${t.tokens.robot}\r\nContent-Type: application/gzip\r\nTransfer-Encoding: chunked\r\n\r\n`);
        let sent = 0;
        const pump = () => {
          while (sent <= 2 * CORPUS_MAX_UPLOAD_BYTES && !sock.destroyed) {
            sent += chunk.length;
            sock.write(`${chunk.length.toString(16)}\r\n`);
            sock.write(chunk);
            if (!sock.write('\r\n')) return void sock.once('drain', pump);
          }
          if (!sock.destroyed) sock.end('0\r\n\r\n');
        };
        pump();
      });
      let text = '';
      sock.on('data', (d: Buffer) => {
        text += d.toString('latin1');
        // A complete problem body arrived: stop sending (the server no longer reads).
        if (/\r\n\r\n[\s\S]*}/.test(text)) sock.destroy();
      });
      sock.on('close', () => resolve(text));
      sock.on('error', () => undefined);
    });
    expect(answer.split('\r\n')[0]).toBe('HTTP/1.1 413 Payload Too Large');
    expect(answer.toLowerCase()).toContain('connection: close');
    expect(answer).toContain('"code":"BODY_TOO_LARGE"');
    results.push({ id: 'chunked-over-limit', outcome: '413 BODY_TOO_LARGE' });
  });

  it('leaves the runs stored before intact, byte for byte', async () => {
    expect(await fingerprint(t.db, t.blobs.dir, baseline)).toEqual(before);
  });

  it('keeps every stored blob equal to its content address and leaves no stray temp files', async () => {
    const files = await listFiles(t.blobs.dir);
    const blobs = files.filter((f) => f.startsWith('sha256/'));
    for (const f of blobs) {
      const name = f.slice('sha256/'.length).replace('/', '');
      expect(await hashFile(join(t.blobs.dir, f)), f).toBe(name);
    }
    // Temp files may only belong to sessions still open (resumable by their client).
    const open = new Set(
      (t.db.prepare("SELECT temp_path FROM upload_sessions WHERE state = 'open'").pluck().all() as string[]).map((p) => p.slice(t.blobs.dir.length + 1)),
    );
    expect(files.filter((f) => f.startsWith('tmp/') && !open.has(f))).toEqual([]);
    // A refused upload leaves no blob behind: every stored blob belongs to a run.
    const referenced = new Set(t.db.prepare('SELECT sha256 FROM runs').pluck().all() as string[]);
    orphanBlobs = blobs.filter((f) => !referenced.has(f.slice('sha256/'.length).replace('/', ''))).length;
    expect(orphanBlobs).toBe(0);
  });

  it('wrote nothing outside the bundle root (path traversal, links)', () => {
    expect(existsSync('/tmp/plumbline-escape.csv')).toBe(false);
    expect(existsSync(join(tmpdir(), 'escape.csv'))).toBe(false);
    expect(existsSync('/mp/escape.csv')).toBe(false);
  });

  it('stays up and within a bounded memory growth', async () => {
    const health = await t.app.inject({ method: 'GET', url: '/healthz' });
    expect(health.statusCode).toBe(200);
    const growthMiB = (rss() - rssBefore) / 1024 / 1024;
    // 64 MiB bombs are streamed, never held: growth stays far below their expanded size (common practice bound).
    expect(growthMiB).toBeLessThan(200);
    process.stdout.write(`corpus: ${cases.length} cases, RSS growth ${growthMiB.toFixed(1)} MiB, unreferenced blobs ${orphanBlobs}\n`);
    await writeFigures('corpus', { cases: cases.length, by_class: countBy(cases.map((k) => k.class)), rss_growth_mib: Number(growthMiB.toFixed(1)), unreferenced_blobs: orphanBlobs, outcomes: results });
  });
});
