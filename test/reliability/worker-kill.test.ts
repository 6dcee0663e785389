/**
 * Fault: analysis worker processes killed with SIGKILL while analyses run (embedded SQLite queue, two worker
 * processes, each killed after 1.5-2.7 s of work and replaced, 8 kills in all). Every run must end `done` exactly once: one report,
 * the flags of that report and nothing else, and no job left leased.
 */
import { rm } from 'node:fs/promises';
import { afterAll, describe, expect, it } from 'vitest';
import { createEmbeddedQueue } from '@plumbline/queue';
import { writeFigures } from './harness.ts';
import { exactlyOnce, makeDataDir, openStore, seedQueuedRuns, sleep, spawnNode, WORKER_SCRIPT, type Child, type DataDir } from './fault-kit.ts';

const RUNS = 100;
let data: DataDir | undefined;
const children = new Set<Child>();

afterAll(async () => {
  for (const c of children) c.proc.kill('SIGKILL');
  if (data) await rm(data.dir, { recursive: true, force: true });
});

describe('worker killed mid-analysis (embedded queue)', () => {
  it(`finishes all ${RUNS} runs exactly once despite repeated SIGKILL`, async () => {
    data = await makeDataDir('kill');
    const { db, store } = openStore(data.dbPath);
    const queue = createEmbeddedQueue(db);
    const ids = await seedQueuedRuns(store, data.blobDir, queue, RUNS, 'killed');
    await queue.close();

    const start = async () => {
      const c = await spawnNode(WORKER_SCRIPT, [data!.dbPath, data!.blobDir]);
      children.add(c);
      return c;
    };
    const done = db.prepare("SELECT count(*) FROM runs WHERE status IN ('done', 'rejected', 'failed') AND run_id LIKE 'killed-%'").pluck();
    const analysing = db.prepare("SELECT count(*) FROM runs WHERE status = 'analysing'").pluck();
    let kills = 0;
    let killedWhileAnalysing = 0;
    const deadline = Date.now() + 150_000;
    // Each of two worker slots: start, work for 1.5-2.7 s, SIGKILL, start again; until MAX_KILLS kills are done,
    // then the last workers drain the queue.
    const MAX_KILLS = 8;
    const slot = async (k: number): Promise<Child> => {
      for (let life = 0; ; life++) {
        const w = await start();
        if (kills >= MAX_KILLS) return w;
        await sleep(1500 + ((life * 7 + k * 5) % 5) * 300);
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

    expect(kills).toBeGreaterThanOrEqual(MAX_KILLS);
    expect(killedWhileAnalysing).toBeGreaterThanOrEqual(4);
    expect(exactlyOnce(db, ids)).toEqual([]);
    const jobs = db.prepare('SELECT state, count(*) AS n, max(attempts) AS maxAttempts FROM jobs GROUP BY state').all() as Array<{ state: string; n: number; maxAttempts: number }>;
    expect(jobs.map((j) => [j.state, j.n])).toEqual([['completed', RUNS]]);
    await writeFigures('worker-kill', { runs: RUNS, sigkills: kills, sigkills_during_analysis: killedWhileAnalysing, max_attempts_used: jobs[0]?.maxAttempts, lost: 0, duplicated: 0 });
    db.close();
  }, 200_000);
});
