/**
 * Shared pieces of the reliability tests: an in-process API with the embedded queue and a real analysis worker,
 * integrity fingerprints of stored data, and polling helpers.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import pino, { type Logger } from 'pino';
import { analyzeBundle } from '@plumbline/analysis';
import { inspectBundle } from '@plumbline/bundle';
import type { Db } from '@plumbline/store';
import { startWorker, type RunningWorker } from '../../services/worker/src/worker.ts';
import { createTestApp, type TestApp } from '../../services/api/src/testing.ts';

export interface LiveApp extends TestApp {
  worker: RunningWorker;
}

/** API + embedded queue + worker running the real analysis, on the wall clock. */
export async function startLiveApp(env: Record<string, string> = {}, logger: Logger = pino({ level: 'silent' })): Promise<LiveApp> {
  const t = await createTestApp({
    inspectBundle,
    clock: { now: () => new Date() },
    env: { PLUMBLINE_UPLOAD_RATE_PER_MIN: '100000', PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN: '100000', PLUMBLINE_WORKER_CONCURRENCY: '2', ...env },
    deps: { logger },
  });
  const worker = await startWorker(t.config, {
    store: t.store,
    blobs: t.blobs,
    queue: t.queue,
    logger,
    clock: { now: () => new Date() },
    analyze: (path, policy) => analyzeBundle(path, policy),
    dispatcherIntervalMs: 50,
  });
  const close = t.close;
  return Object.assign(t, {
    worker,
    async close() {
      await worker.close();
      await close();
    },
  });
}

export const sha256 = (b: Buffer | string): string => createHash('sha256').update(b).digest('hex');

export async function hashFile(path: string): Promise<string> {
  const h = createHash('sha256');
  for await (const c of createReadStream(path)) h.update(c as Buffer);
  return h.digest('hex');
}

/** Every file under `dir` (recursive), as paths relative to it. */
export async function listFiles(dir: string): Promise<string[]> {
  const out: string[] = [];
  const walk = async (d: string, rel: string) => {
    for (const e of await readdir(d, { withFileTypes: true }).catch(() => [])) {
      if (e.isDirectory()) await walk(join(d, e.name), `${rel}${e.name}/`);
      else out.push(`${rel}${e.name}`);
    }
  };
  await walk(dir, '');
  return out.sort();
}

/**
 * A fingerprint of what is stored for the given runs: their rows in runs, reports, flags, segments, reviews and
 * audit_log, and the SHA-256 of each blob file. Equal fingerprints mean nothing of these runs changed.
 */
export async function fingerprint(db: Db, blobDir: string, runIds: readonly string[]): Promise<Record<string, string>> {
  const out: Record<string, string> = {};
  const ids = [...runIds].sort();
  const marks = ids.map(() => '?').join(',');
  const tables: Array<[string, string]> = [
    ['runs', `SELECT * FROM runs WHERE id IN (${marks}) ORDER BY id`],
    ['reports', `SELECT * FROM reports WHERE run IN (${marks}) ORDER BY id`],
    ['flags', `SELECT * FROM flags WHERE run IN (${marks}) ORDER BY run, flag_id`],
    ['segments', `SELECT * FROM segments WHERE run IN (${marks}) ORDER BY run, segment_id`],
    ['reviews', `SELECT * FROM reviews WHERE run IN (${marks}) ORDER BY id`],
    ['audit', `SELECT * FROM audit_log WHERE subject IN (${marks}) ORDER BY id`],
  ];
  for (const [name, sql] of tables) out[name] = sha256(JSON.stringify(db.prepare(sql).all(...ids)));
  const shas = db.prepare(`SELECT sha256 FROM runs WHERE id IN (${marks}) ORDER BY id`).pluck().all(...ids) as string[];
  for (const s of shas) out[`blob:${s}`] = await hashFile(join(blobDir, 'sha256', s.slice(0, 2), s.slice(2)));
  return out;
}

export async function until<T>(what: string, f: () => Promise<T | null | undefined> | T | null | undefined, timeoutMs = 60_000, stepMs = 50): Promise<T> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await f();
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, stepMs));
  }
}

export const TERMINAL = new Set(['done', 'rejected', 'failed']);

export function countBy(xs: readonly string[]): Record<string, number> {
  const out: Record<string, number> = {};
  for (const x of xs) out[x] = (out[x] ?? 0) + 1;
  return out;
}

/** Figures of the last run, one JSON file per test, in test-artifacts/reliability/ (read by README-section.md). */
export async function writeFigures(name: string, figures: Record<string, unknown>): Promise<void> {
  const { mkdir, writeFile } = await import('node:fs/promises');
  const dir = new URL('../../test-artifacts/reliability/', import.meta.url);
  await mkdir(dir, { recursive: true });
  await writeFile(new URL(`${name}.json`, dir), JSON.stringify({ at: new Date().toISOString(), ...figures }, null, 2) + '\n');
}
