import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRemoteLedger, RemoteApiError } from './remote-ledger.ts';

/**
 * The remote ledger against a scripted HTTP server standing in for the API (the real API routes are covered by the
 * API tests and the remote-worker end-to-end test): where the bundle is read from, SHA-256 checking of downloads, and
 * how answers map to outcomes.
 */
const BUNDLE = Buffer.from('bundle bytes of run r1');
const SHA = createHash('sha256').update(BUNDLE).digest('hex');
let server: Server;
let base: string;
let dir: string;
const seen: Array<{ method: string; url: string; auth: string; body: string }> = [];
let startAnswer: { status: number; body: unknown } = { status: 200, body: {} };
let bundleBytes = BUNDLE;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'plumbline-remote-ledger-'));
  server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      seen.push({ method: req.method ?? '', url: req.url ?? '', auth: String(req.headers.authorization), body: Buffer.concat(chunks).toString('utf8') });
      if (req.url === '/api/v1/runs/r1/bundle') return void res.end(bundleBytes);
      if (req.url === '/api/v1/runs/r1/analysis/start') {
        res.statusCode = startAnswer.status;
        return void res.end(JSON.stringify(startAnswer.body));
      }
      if (req.url === '/api/v1/runs/r1/analysis') return void res.end(JSON.stringify({ recorded: false, reason: 'already-recorded' }));
      res.statusCode = 404;
      res.end('{}');
    });
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(async () => {
  await new Promise((r) => server.close(r));
  await rm(dir, { recursive: true, force: true });
});

describe('remote ledger: the bundle', () => {
  it('reads a shared blob in place and downloads (SHA-256 checked) when this host lacks it', async () => {
    const shared = join(dir, 'shared-blob');
    await writeFile(shared, BUNDLE);
    const withShared = createRemoteLedger({ apiUrl: base, token: 'admin-token-1', blobPathOf: () => shared });
    const inPlace = await withShared.bundle('r1', SHA);
    expect(inPlace.path).toBe(shared);
    const ledger = createRemoteLedger({ apiUrl: base, token: 'admin-token-1', blobPathOf: () => join(dir, 'absent') });
    const downloaded = await ledger.bundle('r1', SHA);
    expect(await readFile(downloaded.path)).toEqual(BUNDLE);
    expect(seen.at(-1)).toMatchObject({ method: 'GET', url: '/api/v1/runs/r1/bundle', auth: 'Bearer admin-token-1' });
    await downloaded.release();
    expect(existsSync(downloaded.path)).toBe(false);
  });
  it('refuses a download whose bytes do not match the job hash', async () => {
    bundleBytes = Buffer.from('other bytes');
    const ledger = createRemoteLedger({ apiUrl: base, token: 'admin-token-1', blobPathOf: null });
    await expect(ledger.bundle('r1', SHA)).rejects.toThrow(/SHA-256/);
    bundleBytes = BUNDLE;
  });
});

describe('remote ledger: start and results', () => {
  const ledger = () => createRemoteLedger({ apiUrl: base, token: 'admin-token-1', blobPathOf: null });
  it('maps the start answers', async () => {
    startAnswer = { status: 200, body: { started: false, reason: 'stale' } };
    expect(await ledger().start('r1', 'r1-g1', null)).toEqual({ started: false, reason: 'stale' });
    expect(JSON.parse(seen.at(-1)!.body)).toEqual({ job_key: 'r1-g1', policy: null });
    startAnswer = { status: 200, body: { started: false, reason: 'unknown-policy', message: 'unknown policy x' } };
    expect(await ledger().start('r1', 'r1-g1', 'x')).toEqual({ started: false, reason: 'unknown-policy', message: 'unknown policy x' });
    expect(await ledger().start('r2', 'r2-g1', null)).toEqual({ started: false, reason: 'not-found' });
    startAnswer = { status: 503, body: { code: 'NOT_READY' } };
    await expect(ledger().start('r1', 'r1-g1', null)).rejects.toBeInstanceOf(RemoteApiError);
  });
  it('posts the report with the trajectory as base64 and passes a refusal through', async () => {
    const gz = new Uint8Array([0x1f, 0x8b, 1, 2, 3]);
    const out = await ledger().record('r1', 'r1-g1', { score: 1 } as never, gz);
    expect(out).toEqual({ recorded: false, reason: 'already-recorded' });
    const body = JSON.parse(seen.at(-1)!.body) as { repaired_csv_gz_base64: string; job_key: string };
    expect(body.job_key).toBe('r1-g1');
    expect(Buffer.from(body.repaired_csv_gz_base64, 'base64')).toEqual(Buffer.from(gz));
  });
});
