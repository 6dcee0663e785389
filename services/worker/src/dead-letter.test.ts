import { spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import pino from 'pino';
import { describe, expect, it } from 'vitest';
import { createBlobStore, createStore, openDatabase, type Store } from '@plumbline/store';
import { createBullmqQueue, createEmbeddedQueue, obliterateBullmqQueue, redisAnswers, type JobQueue } from '@plumbline/queue';
import { startWorker } from './worker.ts';

const REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
const redis = (await redisAnswers(REDIS_URL)) || process.env.REQUIRE_REDIS === '1';
if (!redis) console.warn(`[dead-letter tests] no Redis at ${REDIS_URL}: BullMQ case skipped (set REQUIRE_REDIS=1 to fail instead)`);

const CRASH_SCRIPT = fileURLToPath(new URL('./crash-worker-process.ts', import.meta.url));

/** Runs crash-worker-process.ts until the bundle kills it; resolves to the signal it died of. */
function crashingWorker(dbPath: string, bullQueueName?: string): Promise<NodeJS.Signals | null> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', CRASH_SCRIPT, dbPath, ...(bullQueueName ? [bullQueueName] : [])], { stdio: 'ignore' });
    child.on('error', reject);
    child.on('exit', (_code, sig) => resolve(sig));
  });
}

async function until(what: string, predicate: () => boolean, timeoutMs = 15_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!predicate()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}

function queuedRun(store: Store): string {
  const { run } = store.runs.create({ robot_id: 'wren-01', run_id: `r-${randomUUID()}`, site: 'harbourside-depot', started_at: null, sha256: 'd'.repeat(64), size_bytes: 1 });
  store.runs.requestAnalysis(run.id);
  return run.id;
}

/**
 * The worker is told 5 attempts while the queue dead-letters after 2, so the processor's own last-attempt code never
 * runs: only the dead-letter hook can mark the run failed.
 */
async function alwaysThrows(queue: JobQueue, store: Store): Promise<void> {
  const runId = queuedRun(store);
  let tries = 0;
  const w = await startWorker(
    { workerConcurrency: 1, policyFile: null },
    {
      store, blobs: createBlobStore('/nonexistent-blobs'), queue, logger: pino({ level: 'silent' }), clock: { now: () => new Date() }, maxAttempts: 5,
      analyze: async () => {
        tries += 1;
        throw new Error('parser crashed on this bundle');
      },
    },
  );
  try {
    await until('run failed', () => store.runs.get(runId)?.status === 'failed');
    expect(tries).toBe(2);
    expect(store.runs.get(runId)?.status_reason).toBe('analysis did not complete after 2 attempts: Error: parser crashed on this bundle');
    expect(await w.recover()).toBe(0); // a failed run is not re-enqueued at start-up
  } finally {
    await w.close();
  }
}

describe('dead-lettered analysis job, embedded queue', () => {
  it('a job whose analysis always throws ends with its run failed and the reason', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 10, maxAttempts: 2, backoffMs: 10 });
    try {
      await alwaysThrows(queue, createStore(db));
    } finally {
      await queue.close();
      db.close();
    }
  });

  it('a run whose worker process is killed on every attempt ends failed once the last lease lapses', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-dead-'));
    const path = join(dir, 'plumbline.db');
    const db = openDatabase(path);
    const store = createStore(db);
    const runId = queuedRun(store);
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 10, leaseMs: 300, maxAttempts: 2 });
    try {
      // two worker processes in turn, each killed by the bundle (the first enqueues the run at start-up)
      for (let i = 0; i < 2; i++) {
        expect(await crashingWorker(path)).toBe('SIGKILL');
        expect(store.runs.get(runId)?.status).toBe('analysing');
      }
      let analysed = 0;
      const w = await startWorker(
        { workerConcurrency: 1, policyFile: null },
        {
          store, blobs: createBlobStore('/nonexistent-blobs'), queue, logger: pino({ level: 'silent' }), clock: { now: () => new Date() }, maxAttempts: 2,
          analyze: async () => {
            analysed += 1;
            throw new Error('must not run: the job has no attempts left');
          },
        },
      );
      try {
        await until('run failed', () => store.runs.get(runId)?.status === 'failed');
        expect(analysed).toBe(0);
        expect(store.runs.get(runId)?.status_reason).toBe('analysis did not complete after 2 attempts: lease expired (lease expired on the last attempt)');
        expect(await w.recover()).toBe(0);
      } finally {
        await w.close();
      }
    } finally {
      await queue.close();
      db.close();
      rmSync(dir, { recursive: true, force: true });
    }
  }, 30_000);
});

describe.skipIf(!redis)('dead-lettered analysis job, BullMQ queue', () => {
  it('a job whose analysis always throws ends with its run failed and the reason', async () => {
    const queueName = `test-${randomUUID()}`;
    const prefix = 'plumbline-test';
    const db = openDatabase(':memory:');
    const queue = createBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix, maxAttempts: 2, backoffMs: 10 });
    try {
      await alwaysThrows(queue, createStore(db));
    } finally {
      await queue.close();
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix });
      db.close();
    }
  });
});

describe.skipIf(!redis)('dead-lettered analysis job, BullMQ queue, worker killed', () => {
  it('a run whose worker process is killed on every attempt ends failed after the stalled limit', async () => {
    const queueName = `test-${randomUUID()}`;
    const prefix = 'plumbline-test';
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-dead-'));
    const path = join(dir, 'plumbline.db');
    const db = openDatabase(path);
    const store = createStore(db);
    const runId = queuedRun(store);
    const failed = () => store.runs.get(runId)?.status === 'failed';
    try {
      // Worker processes in turn: the first enqueues the run at start-up and dies on it; each next one finds it
      // stalled, takes it and dies, until the stalled limit is passed: then the worker that takes it fails it without
      // running the analysis, and its dead-letter hook marks the run failed (that worker stays up; we stop it).
      let kills = 0;
      for (let i = 0; i < 6 && !failed(); i++) {
        const child = spawn(process.execPath, ['--import', 'tsx', CRASH_SCRIPT, path, queueName], { stdio: 'ignore' });
        const exited = new Promise<NodeJS.Signals | null>((resolve) => child.on('exit', (_code, sig) => resolve(sig)));
        const outcome = await new Promise<NodeJS.Signals | null | 'failed'>((resolve) => {
          const poll = setInterval(() => failed() && (clearInterval(poll), resolve('failed')), 10);
          void exited.then((sig) => (clearInterval(poll), resolve(sig)));
        });
        if (outcome === 'SIGKILL') kills += 1;
        else {
          child.kill('SIGTERM');
          await exited;
        }
      }
      expect(failed()).toBe(true);
      expect(kills).toBeGreaterThanOrEqual(2);
      // BullMQ fails a job that stalled more than maxStalledCount times with this reason (bullmq moveStalledJobsToWait)
      expect(store.runs.get(runId)?.status_reason).toMatch(/^analysis did not complete after \d+ attempts: .*job stalled more than allowable limit$/);
      expect(store.runs.pendingTickets()).toHaveLength(0); // nothing for a start-up re-enqueue to resurrect
    } finally {
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix });
      db.close();
      rmSync(dir, { recursive: true, force: true });
    }
  }, 90_000);
});
