/**
 * Storage faults under the API: the SQLite database locked by another connection, and a full disk under the blob
 * store (a 160 KiB tmpfs when this machine allows mounting one, otherwise a blob store whose writes fail with
 * ENOSPC through an injected seam). Each request fails cleanly with problem+json and nothing half-written remains.
 */
import { execFileSync } from 'node:child_process';
import { mkdir, rm } from 'node:fs/promises';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, describe, expect, it } from 'vitest';
import { loadConfig } from '@plumbline/config';
import { inspectBundle } from '@plumbline/bundle';
import { createBlobStore, createStore, openDatabase, type BlobStore } from '@plumbline/store';
import { createEmbeddedQueue } from '@plumbline/queue';
import { buildApp } from '../../services/api/src/app.ts';
import { noise } from '../corpus/builders.ts';
import { hashFile, listFiles, sha256, writeFigures } from './harness.ts';
import { makeDataDir, smallBundle, type DataDir } from './fault-kit.ts';

const dirs: DataDir[] = [];
const mounts: string[] = [];
afterAll(async () => {
  for (const m of mounts) execFileSync('umount', [m]);
  for (const d of dirs) await rm(d.dir, { recursive: true, force: true });
});

async function appOn(data: DataDir, blobs: BlobStore, busyTimeoutMs = 5000) {
  const config = loadConfig({ PLUMBLINE_DATA_DIR: data.dir, PLUMBLINE_LOG_LEVEL: 'silent', PLUMBLINE_UPLOAD_RATE_PER_MIN: '10000' });
  const db = openDatabase(data.dbPath, { busyTimeoutMs });
  const store = createStore(db);
  const queue = createEmbeddedQueue(db);
  const app = await buildApp(config, { store, blobs, queue, logger: pino({ level: 'silent' }), clock: { now: () => new Date() }, inspectBundle });
  const robot = store.tokens.create({ role: 'robot', name: 'kestrel-01', robot_id: 'kestrel-01' }).token;
  const post = (bytes: Buffer) => app.inject({ method: 'POST', url: '/api/v1/runs', headers: { authorization: `Bearer ${robot}`, 'content-type': 'application/gzip' }, payload: bytes });
  return { app, db, store, queue, robot, post, async close() { await app.close(); await queue.close(); db.close(); } };
}

function expectProblem(r: { statusCode: number; headers: Record<string, unknown>; json(): Record<string, unknown> }, status: number, code: string): void {
  expect(r.statusCode).toBe(status);
  expect(String(r.headers['content-type'])).toMatch(/^application\/problem\+json/);
  expect(r.json()).toMatchObject({ status, code });
}

describe('database locked by another connection', () => {
  it('refuses with 503 problem+json, stores no run, and succeeds once the lock is gone', async () => {
    const data = await makeDataDir('locked');
    dirs.push(data);
    const t = await appOn(data, createBlobStore(data.blobDir), 300);
    const bundle = await smallBundle('while-locked');
    const other = openDatabase(data.dbPath);
    other.exec('BEGIN EXCLUSIVE');
    let r;
    try {
      r = await t.post(bundle);
    } finally {
      other.exec('ROLLBACK');
      other.close();
    }
    expectProblem(r, 503, 'NOT_READY');
    expect(r.headers['retry-after']).toBeDefined();
    expect(t.db.prepare('SELECT count(*) FROM runs').pluck().get()).toBe(0);
    expect((await listFiles(data.blobDir)).filter((f) => f.startsWith('tmp/'))).toEqual([]);
    const again = await t.post(bundle);
    expect(again.statusCode, again.body).toBe(201);
    expect(again.json().run.sha256).toBe(sha256(bundle));
    await t.close();
  });
});

/** Mounts a tmpfs of `kib` KiB at `dir`; false when this machine does not allow it. */
function tryTmpfs(dir: string, kib: number): boolean {
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', `size=${kib}k`, 'tmpfs', dir], { stdio: 'ignore' });
    mounts.push(dir);
    return true;
  } catch {
    return false;
  }
}

/** The seam used when no tmpfs can be mounted: every write stream fails with ENOSPC after `limit` bytes. */
function fullDiskBlobs(inner: BlobStore, limit: number): BlobStore {
  const failing = async function* (source: AsyncIterable<Uint8Array>) {
    let n = 0;
    for await (const c of source) {
      n += c.byteLength;
      if (n > limit) throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC', errno: -28 });
      yield c;
    }
  };
  return {
    ...inner,
    writeStream: (source, opts) => inner.writeStream(failing(source as AsyncIterable<Uint8Array>), opts),
    appendChunk: (path, offset, source, opts) => inner.appendChunk(path, offset, failing(source as AsyncIterable<Uint8Array>), opts),
  };
}

describe('disk full under the blob store', () => {
  it('fails one-shot and chunked uploads with 507 problem+json and leaves no partial bytes', async () => {
    const data = await makeDataDir('full');
    dirs.push(data);
    await mkdir(data.blobDir, { recursive: true });
    const tmpfs = tryTmpfs(data.blobDir, 160);
    if (!tmpfs) process.stdout.write('notice: cannot mount a tmpfs here; the full disk is simulated by an ENOSPC seam in the blob store\n');
    const real = createBlobStore(data.blobDir);
    const t = await appOn(data, tmpfs ? real : fullDiskBlobs(real, 160 * 1024));

    // A run stored before the disk fills up.
    const first = await smallBundle('before-full');
    expect((await t.post(first)).statusCode).toBe(201);
    const firstPath = real.pathOf(sha256(first));

    const big = noise(400 * 1024, 7);
    const r = await t.post(big);
    expectProblem(r, 507, 'STORAGE_FULL');

    const s = await t.app.inject({ method: 'POST', url: '/api/v1/uploads', headers: { authorization: `Bearer ${t.robot}` }, payload: { robot_id: 'kestrel-01', run_id: 'too-big-for-disk', size_bytes: big.length, sha256: sha256(big) } });
    expect(s.statusCode, s.body).toBe(201);
    const id = s.json().id as string;
    const put = await t.app.inject({ method: 'PUT', url: `/api/v1/uploads/${id}?offset=0`, headers: { authorization: `Bearer ${t.robot}`, 'content-type': 'application/octet-stream' }, payload: big });
    expectProblem(put, 507, 'STORAGE_FULL');
    // The session is still resumable from the last acknowledged byte, and its temp file holds no stray bytes.
    const state = await t.app.inject({ method: 'GET', url: `/api/v1/uploads/${id}`, headers: { authorization: `Bearer ${t.robot}` } });
    expect(state.json()).toMatchObject({ state: 'open', received_bytes: 0 });
    const files = await listFiles(data.blobDir);
    const temp = files.filter((f) => f.startsWith('tmp/'));
    expect(temp).toHaveLength(1);
    const { statSync } = await import('node:fs');
    expect(statSync(join(data.blobDir, temp[0]!)).size).toBe(0);
    expect(files.filter((f) => f.startsWith('sha256/'))).toHaveLength(1);
    expect(await hashFile(firstPath)).toBe(sha256(first));
    expect(t.db.prepare('SELECT count(*) FROM runs').pluck().get()).toBe(1);
    await t.close();
    await writeFigures('storage-faults', { database_locked: '503 NOT_READY, no run stored, retry succeeded', disk_full: tmpfs ? 'tmpfs 160 KiB' : 'ENOSPC seam', disk_full_outcome: '507 STORAGE_FULL, no partial blob, session resumable at 0' });
  });
});
