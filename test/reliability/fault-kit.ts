/**
 * Helpers of the fault tests: a data directory seeded with queued runs, child processes (workers, the serve
 * command) that can be killed, and the exactly-once checks over the database.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtemp } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createBlobStore, createStore, openDatabase, type Db, type Store } from '@plumbline/store';
import type { JobQueue } from '@plumbline/queue';
import { requestAnalysis } from '../../services/api/src/ingest.ts';
import { entriesOf, imuCsv, manifest, odometryCsv, tarGz } from '../corpus/builders.ts';

export const WORKER_SCRIPT = fileURLToPath(new URL('./fixtures/worker-process.ts', import.meta.url));
export const CLI_MAIN = fileURLToPath(new URL('../../services/cli/src/main.ts', import.meta.url));

/** A small, fast bundle (5 s of IMU, 5 s of odometry) of run `runId` for `robotId`. */
export function smallBundle(runId: string, robotId = 'kestrel-01'): Promise<Buffer> {
  return tarGz(entriesOf({ 'run.json': JSON.stringify(manifest(runId, { robot_id: robotId }), null, 2), 'odometry.csv': odometryCsv(100), 'imu.csv': imuCsv(1000) }));
}

export interface DataDir {
  dir: string;
  dbPath: string;
  blobDir: string;
}

export async function makeDataDir(label: string): Promise<DataDir> {
  const dir = await mkdtemp(join(tmpdir(), `plumbline-${label}-`));
  return { dir, dbPath: join(dir, 'plumbline.sqlite'), blobDir: join(dir, 'blobs') };
}

/** Stores `n` runs and enqueues their analysis on `queue`; returns the run ids. */
export async function seedQueuedRuns(store: Store, blobDir: string, queue: JobQueue, n: number, prefix: string): Promise<string[]> {
  const blobs = createBlobStore(blobDir);
  const ids: string[] = [];
  for (let i = 0; i < n; i++) {
    const runId = `${prefix}-${String(i).padStart(3, '0')}`;
    const bytes = await smallBundle(runId);
    const blob = await blobs.writeStream((async function* () { yield bytes; })(), { maxBytes: 1 << 24 });
    const { run } = store.runs.create({ robot_id: 'kestrel-01', run_id: runId, site: 'harbourside-depot', started_at: '2026-11-30T06:00:00Z', sha256: blob.sha256, size_bytes: blob.sizeBytes, manifest: manifest(runId) as never });
    await requestAnalysis(store, queue, run.id);
    ids.push(run.id);
  }
  return ids;
}

export function openStore(dbPath: string): { db: Db; store: Store } {
  const db = openDatabase(dbPath, { busyTimeoutMs: 10_000 });
  return { db, store: createStore(db) };
}

/** Exactly-once checks: one report per run, the flags of exactly that report, every run done. */
export function exactlyOnce(db: Db, runIds: readonly string[]): string[] {
  const problems: string[] = [];
  const status = db.prepare('SELECT status, status_reason FROM runs WHERE id = ?');
  const reports = db.prepare('SELECT id, report_json FROM reports WHERE run = ?');
  const flags = db.prepare('SELECT count(*) FROM flags WHERE run = ?').pluck();
  const foreign = db.prepare('SELECT count(*) FROM flags f WHERE run = ? AND report_id NOT IN (SELECT id FROM reports WHERE run = f.run AND is_current = 1)').pluck();
  for (const id of runIds) {
    const s = status.get(id) as { status: string; status_reason: string | null };
    if (s.status !== 'done') problems.push(`${id}: ${s.status} ${s.status_reason ?? ''}`);
    const rs = reports.all(id) as Array<{ id: number; report_json: string }>;
    if (rs.length !== 1) {
      problems.push(`${id}: ${rs.length} reports`);
      continue;
    }
    const expected = (JSON.parse(rs[0]!.report_json) as { flags: unknown[] }).flags.length;
    const got = flags.get(id) as number;
    if (got !== expected) problems.push(`${id}: ${got} flag rows for a report of ${expected} flags`);
    if ((foreign.get(id) as number) > 0) problems.push(`${id}: flag rows of a report that is not current`);
  }
  return problems;
}

export interface Child {
  proc: ChildProcess;
  out: () => string;
  exited: Promise<number | null>;
}

/** Spawns `node --import tsx <script> ...args`; resolves once a stdout line matches `ready`. */
export async function spawnNode(script: string, args: string[], env: Record<string, string> = {}, ready = /^ready$/m, timeoutMs = 60_000): Promise<Child> {
  const proc = spawn(process.execPath, ['--import', 'tsx', script, ...args], { stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, ...env } });
  let out = '';
  let err = '';
  proc.stdout!.on('data', (d: Buffer) => (out += d.toString()));
  proc.stderr!.on('data', (d: Buffer) => (err += d.toString()));
  const exited = new Promise<number | null>((resolve) => proc.on('exit', (code) => resolve(code)));
  const end = Date.now() + timeoutMs;
  while (!ready.test(out)) {
    if (proc.exitCode !== null || proc.signalCode !== null) throw new Error(`${script} exited before ready: ${err.slice(-2000)}`);
    if (Date.now() > end) {
      proc.kill('SIGKILL');
      throw new Error(`${script} not ready after ${timeoutMs} ms: ${err.slice(-2000)}`);
    }
    await new Promise((r) => setTimeout(r, 25));
  }
  return { proc, out: () => out + err, exited };
}

/** A TCP port free on 127.0.0.1 right now. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
