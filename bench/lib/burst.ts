/**
 * The Burst workload: N small runs (one short simulated bundle stored once, N runs pointing at it) requested for
 * analysis at once, drained by worker processes through the embedded queue (SQLite) or BullMQ (Redis). Every run
 * must end `done` with exactly one report; jobs/s is measured from the first enqueue to the last recorded report.
 */
import { randomUUID } from 'node:crypto';
import { createReadStream, existsSync } from 'node:fs';
import { mkdir, rename, rm } from 'node:fs/promises';
import { join } from 'node:path';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createBullmqQueue, createEmbeddedQueue, obliterateBullmqQueue, type JobQueue } from '@plumbline/queue';
import { requestAnalysis } from '@plumbline/api';
import { makeRunSpec, simulateRun, writeRun } from '@plumbline/simulator';
import { startServerChild, type ServerChild } from './children.ts';
import { fleetRobotId } from './fleet.ts';
import { specHash } from './shift.ts';
export { redisAnswers } from '@plumbline/queue';

export interface BurstResult {
  queue: 'embedded' | 'bullmq';
  workers: number;
  jobs: number;
  enqueueS: number;
  drainS: number;
  jobsPerS: number;
  done: number;
  /** runs with exactly one report, runs with more than one, reports in total */
  exactlyOnce: number;
  duplicates: number;
  reports: number;
}

/** A short clean run (12 s of ground motion, IMU and odometry only) as a .tar.gz, cached in bench/out. */
export async function ensureBurstBundle(outRoot: string): Promise<string> {
  const spec = makeRunSpec({ seed: 1_000, robotId: 'wren-01', runId: 'burst', durationS: 12, site: 'northgate-yard', gnssRateHz: 0, loops: false });
  const dir = join(outRoot, `burst-${specHash(spec)}`);
  const path = join(dir, 'bundle.tar.gz');
  if (!existsSync(path)) {
    const tmp = `${dir}.tmp-${process.pid}`;
    await rm(tmp, { recursive: true, force: true });
    await writeRun(simulateRun(spec), tmp, { archive: 'tar.gz' });
    await rename(tmp, dir);
  }
  return path;
}

async function waitFor(check: () => boolean, timeoutMs: number): Promise<boolean> {
  const end = Date.now() + timeoutMs;
  while (Date.now() < end) {
    if (check()) return true;
    await new Promise((r) => setTimeout(r, 100));
  }
  return check();
}

/** Runs one Burst: `redisUrl` null = embedded queue; `workers` child processes with concurrency 1 each. */
export async function benchBurst(opts: { outRoot: string; jobs: number; workers: number; redisUrl: string | null; timeoutMs?: number }): Promise<BurstResult> {
  const bundle = await ensureBurstBundle(opts.outRoot);
  const dataDir = join(opts.outRoot, `burst-run-${process.pid}-${opts.redisUrl ? 'bullmq' : 'embedded'}-${opts.workers}`);
  await rm(dataDir, { recursive: true, force: true });
  await mkdir(dataDir, { recursive: true });
  const queueName = `bench-burst-${randomUUID()}`;
  const db = openDatabase(join(dataDir, 'plumbline.sqlite'));
  const store = createStore(db);
  const queue: JobQueue = opts.redisUrl ? createBullmqQueue({ redisUrl: opts.redisUrl, queueName }) : createEmbeddedQueue(db);
  const children: ServerChild<object>[] = [];
  try {
    const blob = await createBlobStore(join(dataDir, 'blobs')).writeStream(createReadStream(bundle), { maxBytes: 1 << 30 });
    const ids: string[] = [];
    for (let i = 0; i < opts.jobs; i++) {
      const { run } = store.runs.create({
        robot_id: fleetRobotId(i % 50), run_id: `burst-${i}`, site: 'northgate-yard', started_at: null, sha256: blob.sha256, size_bytes: blob.sizeBytes,
      });
      ids.push(run.id);
    }
    const args = [dataDir, opts.redisUrl ?? 'embedded', queueName];
    for (let w = 0; w < opts.workers; w++) children.push(await startServerChild('burst-worker.ts', args));
    const t0 = performance.now();
    for (const id of ids) await requestAnalysis(store, queue, id);
    const enqueueS = (performance.now() - t0) / 1000;
    const finished = db.prepare("SELECT count(*) FROM runs WHERE status IN ('done', 'rejected', 'failed')").pluck();
    await waitFor(() => (finished.get() as number) >= opts.jobs, opts.timeoutMs ?? 30 * 60_000);
    const drainS = (performance.now() - t0) / 1000;
    const done = db.prepare("SELECT count(*) FROM runs WHERE status = 'done'").pluck().get() as number;
    const perRun = db.prepare('SELECT sum(c = 1) AS once, sum(c > 1) AS dup, sum(c) AS total FROM (SELECT count(*) AS c FROM reports GROUP BY run)').get() as
      { once: number | null; dup: number | null; total: number | null };
    return {
      queue: opts.redisUrl ? 'bullmq' : 'embedded', workers: opts.workers, jobs: opts.jobs, enqueueS, drainS, jobsPerS: done / drainS, done,
      exactlyOnce: perRun.once ?? 0, duplicates: perRun.dup ?? 0, reports: perRun.total ?? 0,
    };
  } finally {
    for (const c of children) await c.stop();
    await queue.close();
    if (opts.redisUrl) await obliterateBullmqQueue({ redisUrl: opts.redisUrl, queueName }).catch(() => undefined);
    db.close();
    await rm(dataDir, { recursive: true, force: true });
  }
}

