/**
 * Behavioural contract every JobQueue adapter must meet; run by embedded.test.ts and bullmq.test.ts.
 * Timing tolerances: backoffs are checked as lower bounds only (a retry may come later under load, never earlier).
 */
import type { AnalysisJob } from '@plumbline/contracts';
import { describe, expect, it } from 'vitest';
import { UnrecoverableJobError } from '../errors.ts';
import type { DeadLetteredJob, JobQueue } from '../types.ts';

export interface QueueUnderTest {
  queue: JobQueue;
  cleanup(): Promise<void>;
}

export type QueueFactory = (opts: { maxAttempts: number; backoffMs: number }) => Promise<QueueUnderTest>;

export function job(n: number): AnalysisJob {
  return { run: `run-${n}`, sha256: n.toString(16).padStart(64, '0') };
}

export async function waitFor(predicate: () => boolean | Promise<boolean>, timeoutMs = 10_000, what = 'condition'): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!(await predicate())) {
    if (Date.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function withQueue(factory: QueueFactory, opts: { maxAttempts?: number; backoffMs?: number }, body: (q: JobQueue) => Promise<void>) {
  const { queue, cleanup } = await factory({ maxAttempts: opts.maxAttempts ?? 5, backoffMs: opts.backoffMs ?? 50 });
  try {
    await body(queue);
  } finally {
    await queue.close();
    await cleanup();
  }
}

export function describeQueueContract(name: string, factory: QueueFactory, skip = false): void {
  describe.skipIf(skip)(`JobQueue contract: ${name}`, () => {
    it('delivers every enqueued job once with its payload and counts it completed', async () => {
      await withQueue(factory, {}, async (q) => {
        const ids = await Promise.all([1, 2, 3].map((n) => q.enqueue(job(n))));
        expect(new Set(ids).size).toBe(3);
        const seen: string[] = [];
        q.work(async (j) => {
          seen.push(j.payload.run);
          expect(j.attempt).toBe(1);
        }, { concurrency: 1 });
        await waitFor(async () => (await q.counts()).completed === 3, 10_000, '3 completed');
        expect(seen.sort()).toEqual(['run-1', 'run-2', 'run-3']);
        const c = await q.counts();
        expect(c).toMatchObject({ waiting: 0, active: 0, dead: 0 });
      });
    });

    it('runs up to `concurrency` handlers at once and no more', async () => {
      await withQueue(factory, {}, async (q) => {
        for (let n = 0; n < 6; n++) await q.enqueue(job(n));
        let running = 0;
        let peak = 0;
        let done = 0;
        q.work(async () => {
          running += 1;
          peak = Math.max(peak, running);
          await sleep(300); // long enough for all three slots to fill even on a loaded machine
          running -= 1;
          done += 1;
        }, { concurrency: 3 });
        await waitFor(() => done === 6, 10_000, '6 done');
        expect(peak).toBe(3);
      });
    });

    it('retries a failing job with exponential backoff until it succeeds', async () => {
      const backoffMs = 100;
      await withQueue(factory, { backoffMs, maxAttempts: 5 }, async (q) => {
        await q.enqueue(job(7));
        const times: number[] = [];
        const attempts: number[] = [];
        q.work(async (j) => {
          times.push(Date.now());
          attempts.push(j.attempt);
          if (j.attempt < 3) throw new Error(`transient failure ${j.attempt}`);
        }, { concurrency: 1 });
        await waitFor(async () => (await q.counts()).completed === 1, 10_000, 'completion after retries');
        expect(attempts).toEqual([1, 2, 3]);
        // backoff base * 2^(attempt-1): >= 100 ms after attempt 1, >= 200 ms after attempt 2 (5 ms timer slack)
        expect(times[1]! - times[0]!).toBeGreaterThanOrEqual(backoffMs - 5);
        expect(times[2]! - times[1]!).toBeGreaterThanOrEqual(2 * backoffMs - 5);
        expect((await q.counts()).dead).toBe(0);
      });
    });

    it('counts a job waiting out its backoff as delayed and failed', async () => {
      await withQueue(factory, { maxAttempts: 3, backoffMs: 60_000 }, async (q) => {
        await q.enqueue(job(6));
        let calls = 0;
        const worker = q.work(async () => {
          calls += 1;
          throw new Error('transient');
        }, { concurrency: 1 });
        await waitFor(async () => (await q.counts()).failed === 1, 10_000, 'failed count');
        expect(await q.counts()).toMatchObject({ waiting: 0, active: 0, delayed: 1, failed: 1, dead: 0, completed: 0 });
        expect(calls).toBe(1);
        await worker.close();
      });
    });

    it('dead-letters a job after maxAttempts failed attempts', async () => {
      await withQueue(factory, { maxAttempts: 3, backoffMs: 20 }, async (q) => {
        await q.enqueue(job(8));
        const attempts: number[] = [];
        q.work(async (j) => {
          attempts.push(j.attempt);
          throw new Error('always fails');
        }, { concurrency: 1 });
        await waitFor(async () => (await q.counts()).dead === 1, 10_000, 'dead-letter');
        await sleep(150); // no further attempt after dead-lettering
        expect(attempts).toEqual([1, 2, 3]);
        expect(await q.counts()).toMatchObject({ waiting: 0, active: 0, delayed: 0, failed: 0, completed: 0, dead: 1 });
      });
    });

    it('dead-letters at once on UnrecoverableJobError', async () => {
      await withQueue(factory, { maxAttempts: 5, backoffMs: 20 }, async (q) => {
        await q.enqueue(job(9));
        const attempts: number[] = [];
        q.work(async (j) => {
          attempts.push(j.attempt);
          throw new UnrecoverableJobError('bundle cannot be read');
        }, { concurrency: 1 });
        await waitFor(async () => (await q.counts()).dead === 1, 10_000, 'dead-letter');
        await sleep(150);
        expect(attempts).toEqual([1]);
      });
    });

    it('dedups by jobId while the job is pending', async () => {
      await withQueue(factory, {}, async (q) => {
        const a = await q.enqueue(job(10), { jobId: 'run-10.g1' });
        const b = await q.enqueue(job(10), { jobId: 'run-10.g1' });
        const c = await q.enqueue(job(10), { jobId: 'run-10.g2' });
        expect(a).toBe('run-10.g1');
        expect(b).toBe('run-10.g1');
        expect(c).toBe('run-10.g2');
        expect((await q.counts()).waiting).toBe(2);
        const seen: string[] = [];
        q.work(async (j) => {
          seen.push(j.id);
        }, { concurrency: 2 });
        await waitFor(async () => (await q.counts()).completed === 2, 10_000, '2 completed');
        expect(seen.sort()).toEqual(['run-10.g1', 'run-10.g2']);
      });
    });

    it('holds a delayed job back until its delay has passed', async () => {
      await withQueue(factory, {}, async (q) => {
        const enqueuedAt = Date.now();
        await q.enqueue(job(11), { delayMs: 800 }); // long enough to still be delayed when counted under load
        expect((await q.counts()).delayed).toBe(1);
        let ranAt = 0;
        q.work(async () => {
          ranAt = Date.now();
        }, { concurrency: 1 });
        await waitFor(() => ranAt > 0, 10_000, 'delayed job');
        expect(ranAt - enqueuedAt).toBeGreaterThanOrEqual(795); // 5 ms timer slack
      });
    });

    it('worker close() waits for in-flight handlers', async () => {
      await withQueue(factory, {}, async (q) => {
        await q.enqueue(job(12));
        let started = false;
        let finished = false;
        const worker = q.work(async () => {
          started = true;
          await sleep(300);
          finished = true;
        }, { concurrency: 1 });
        await waitFor(() => started, 10_000, 'start');
        await worker.close();
        expect(finished).toBe(true);
        // a job enqueued after close is not taken by the closed worker
        await q.enqueue(job(13));
        await sleep(200);
        expect((await q.counts()).waiting).toBe(1);
      });
    });

    it('reports a job to onDeadLetter once, after its last attempt threw', async () => {
      await withQueue(factory, { maxAttempts: 2, backoffMs: 20 }, async (q) => {
        const dead: DeadLetteredJob[] = [];
        let tries = 0;
        q.work(async () => {
          tries += 1;
          throw new Error('bundle crashed the parser');
        }, { concurrency: 1, onDeadLetter: async (d) => void dead.push(d) });
        await q.enqueue(job(7), { jobId: 'always-throws' });
        await waitFor(() => dead.length === 1, 10_000, 'dead-letter hook');
        await sleep(100); // no second report, no third try
        expect(tries).toBe(2);
        expect(dead).toHaveLength(1);
        expect(dead[0]?.id).toBe('always-throws');
        expect(dead[0]?.payload).toEqual(job(7));
        expect(dead[0]?.attempts).toBe(2);
        expect(dead[0]?.error).toContain('bundle crashed the parser');
      });
    });

    it('reports an unrecoverable job to onDeadLetter after its first attempt', async () => {
      await withQueue(factory, { maxAttempts: 5, backoffMs: 20 }, async (q) => {
        const dead: DeadLetteredJob[] = [];
        q.work(async () => {
          throw new UnrecoverableJobError('cannot ever work');
        }, { concurrency: 1, onDeadLetter: async (d) => void dead.push(d) });
        await q.enqueue(job(8), { jobId: 'unrecoverable' });
        await waitFor(() => dead.length === 1, 10_000, 'dead-letter hook');
        expect(dead[0]?.attempts).toBe(1);
        expect(dead[0]?.error).toContain('cannot ever work');
      });
    });

    it('answers ping', async () => {
      await withQueue(factory, {}, async (q) => {
        expect(await q.ping()).toBe(true);
      });
    });
  });
}
