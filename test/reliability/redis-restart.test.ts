/**
 * Fault: Redis killed (SIGKILL) and restarted while analysis jobs are queued and running on BullMQ. A private
 * redis-server on a free port (append-only file, fsync on every write) is used, never the shared one. No job may be
 * lost and every run must end `done` exactly once. Skips with a notice when redis-server is not installed, unless
 * REQUIRE_REDIS=1.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdir, rm } from 'node:fs/promises';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, describe, expect, it } from 'vitest';
import { analyzeBundle } from '@plumbline/analysis';
import { createBlobStore } from '@plumbline/store';
import { createBullmqQueue } from '@plumbline/queue';
import { startWorker } from '../../services/worker/src/worker.ts';
import { writeFigures } from './harness.ts';
import { exactlyOnce, freePort, makeDataDir, openStore, seedQueuedRuns, sleep, type DataDir } from './fault-kit.ts';

const RUNS = 30;
const haveRedis = spawnSync('redis-server', ['--version'], { stdio: 'ignore' }).status === 0;
if (!haveRedis) {
  if (process.env.REQUIRE_REDIS === '1') throw new Error('REQUIRE_REDIS=1 but redis-server is not installed');
  process.stdout.write('notice: redis-server not installed; the Redis restart test is skipped\n');
}

let data: DataDir | undefined;
let redis: ChildProcess | undefined;
afterAll(async () => {
  redis?.kill('SIGKILL');
  if (data) await rm(data.dir, { recursive: true, force: true });
});

async function startRedis(dir: string, port: number): Promise<ChildProcess> {
  const p = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'yes', '--appendfsync', 'always', '--dir', dir], { stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  p.stdout!.on('data', (d: Buffer) => (out += d.toString()));
  const end = Date.now() + 10_000;
  while (!/Ready to accept connections/.test(out)) {
    if (p.exitCode !== null || Date.now() > end) throw new Error(`redis-server did not start: ${out.slice(-1000)}`);
    await sleep(20);
  }
  return p;
}

describe.skipIf(!haveRedis)('Redis restarted with jobs queued and running', () => {
  it(`loses none of ${RUNS} jobs across a SIGKILL and restart of Redis`, async () => {
    data = await makeDataDir('redis');
    const redisDir = join(data.dir, 'redis');
    await mkdir(redisDir, { recursive: true });
    const port = await freePort();
    redis = await startRedis(redisDir, port);
    const { db, store } = openStore(data.dbPath);
    const queue = createBullmqQueue({ redisUrl: `redis://127.0.0.1:${port}`, queueName: `test-${randomUUID()}`, lockDurationMs: 2000, backoffMs: 100 });
    const ids = await seedQueuedRuns(store, data.blobDir, queue, RUNS, 'redis');
    const worker = await startWorker({ workerConcurrency: 2, policyFile: null }, {
      store, blobs: createBlobStore(data.blobDir), queue, logger: pino({ level: 'silent' }), clock: { now: () => new Date() },
      analyze: (path, policy) => analyzeBundle(path, policy),
    });
    const finished = db.prepare("SELECT count(*) FROM runs WHERE status IN ('done', 'rejected', 'failed')").pluck();
    const deadline = Date.now() + 120_000;
    const analysing = db.prepare("SELECT count(*) FROM runs WHERE status = 'analysing'").pluck();
    // Kill once a few runs are done and at least one analysis is running.
    while (((finished.get() as number) < 4 || (analysing.get() as number) === 0) && Date.now() < deadline) await sleep(5);
    const doneAtKill = finished.get() as number;
    const analysingAtKill = analysing.get() as number;
    redis.kill('SIGKILL');
    await new Promise((r) => redis!.once('exit', r));
    await sleep(1500);
    redis = await startRedis(redisDir, port);
    while ((finished.get() as number) < RUNS && Date.now() < deadline) await sleep(200);
    await worker.close();
    await queue.close();
    expect(doneAtKill).toBeLessThan(RUNS);
    expect(analysingAtKill).toBeGreaterThan(0);
    expect(exactlyOnce(db, ids)).toEqual([]);
    db.close();
    await writeFigures('redis-restart', { runs: RUNS, redis_sigkills: 1, runs_done_before_kill: doneAtKill, analysing_at_kill: analysingAtKill, lost: 0, duplicated: 0 });
  }, 180_000);
});
