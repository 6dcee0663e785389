/**
 * Fault: analysis worker processes killed with SIGKILL while analyses run, on the embedded SQLite queue and on
 * BullMQ (Redis on 127.0.0.1:6379, a fresh queue name; skipped with a notice when Redis does not answer, unless
 * REQUIRE_REDIS=1). Two worker processes, each killed 0.7-1.5 s after it is ready and replaced, 8 kills in all.
 * Every run must end `done` exactly once: one report, the flags of that report and nothing else, no job left leased.
 */
import { randomUUID } from 'node:crypto';
import { rm } from 'node:fs/promises';
import { afterAll, describe, expect, it } from 'vitest';
import { createBullmqQueue, createEmbeddedQueue, obliterateBullmqQueue } from '@plumbline/queue';
import { writeFigures } from './harness.ts';
import { exactlyOnce, makeDataDir, openStore, seedQueuedRuns, sleep, spawnNode, WORKER_SCRIPT, type Child, type DataDir } from './fault-kit.ts';
import { redisGate } from '../redis-gate.ts';

const RUNS = 100;
const REDIS_URL = 'redis://127.0.0.1:6379';
const dirs: DataDir[] = [];
const children = new Set<Child>();

const haveRedis = await redisGate('worker-kill, BullMQ', REDIS_URL);

afterAll(async () => {
  for (const c of children) c.proc.kill('SIGKILL');
  for (const d of dirs) await rm(d.dir, { recursive: true, force: true });
});

for (const mode of ['embedded', 'bullmq'] as const) {
describe.skipIf(mode === 'bullmq' && !haveRedis)(`worker killed mid-analysis (${mode} queue)`, () => {
  it(`finishes all ${RUNS} runs exactly once despite repeated SIGKILL`, async () => {
    const data = await makeDataDir(`kill-${mode}`);
    dirs.push(data);
    const queueName = `test-${randomUUID()}`;
    const { db, store } = openStore(data.dbPath);
    const queue = mode === 'embedded' ? createEmbeddedQueue(db) : createBullmqQueue({ redisUrl: REDIS_URL, queueName });
    const ids = await seedQueuedRuns(store, data.blobDir, queue, RUNS, 'killed');
    await queue.close();

    const start = async () => {
      const c = await spawnNode(WORKER_SCRIPT, [data.dbPath, data.blobDir, ...(mode === 'bullmq' ? [REDIS_URL] : [])], { QUEUE_NAME: queueName });
      children.add(c);
      return c;
    };
    const done = db.prepare("SELECT count(*) FROM runs WHERE status IN ('done', 'rejected', 'failed') AND run_id LIKE 'killed-%'").pluck();
    const analysing = db.prepare("SELECT count(*) FROM runs WHERE status = 'analysing'").pluck();
    let kills = 0;
    let killedWhileAnalysing = 0;
    const deadline = Date.now() + 150_000;
    // Each of two worker slots: start, work for 0.7-1.5 s, SIGKILL, start again; until MAX_KILLS kills are done,
    // then the last workers drain the queue.
    const MAX_KILLS = 8;
    const slot = async (k: number): Promise<Child> => {
      for (let life = 0; ; life++) {
        const w = await start();
        if (kills >= MAX_KILLS) return w;
        await sleep(700 + ((life * 7 + k * 5) % 5) * 200);
        if ((done.get() as number) >= RUNS) return w;
        if ((analysing.get() as number) > 0) killedWhileAnalysing++;
        w.proc.kill('SIGKILL');
        await w.exited;
        children.delete(w);
        kills++;
      }
    };
    const workers = await Promise.all([slot(0), slot(1)]);
    while ((done.get() as number) < RUNS && Date.now() < deadline) await sleep(200);
    for (const w of workers) w.proc.kill('SIGTERM');
    await Promise.all(workers.map((w) => w.exited));

    expect(kills).toBeGreaterThanOrEqual(6);
    expect(killedWhileAnalysing).toBeGreaterThanOrEqual(4);
    expect(exactlyOnce(db, ids)).toEqual([]);
    let maxAttempts: number | null = null;
    if (mode === 'embedded') {
      const jobs = db.prepare('SELECT state, count(*) AS n, max(attempts) AS maxAttempts FROM jobs GROUP BY state').all() as Array<{ state: string; n: number; maxAttempts: number }>;
      expect(jobs.map((j) => [j.state, j.n])).toEqual([['completed', RUNS]]);
      maxAttempts = jobs[0]?.maxAttempts ?? null;
    } else {
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName });
    }
    await writeFigures(`worker-kill-${mode}`, { runs: RUNS, sigkills: kills, sigkills_during_analysis: killedWhileAnalysing, max_attempts_used: maxAttempts, lost: 0, duplicated: 0 });
    db.close();
  }, 200_000);
});
}
