import { randomUUID } from 'node:crypto';
import { Worker } from 'bullmq';
import { describe, expect, it } from 'vitest';
import { createBullmqQueue, obliterateBullmqQueue } from './bullmq.ts';
import { describeQueueContract, job, waitFor } from './testing/queue-contract.ts';
import { redisAnswers } from './redis-ping.ts';

const REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';


const available = await redisAnswers(REDIS_URL);
if (!available) {
  if (process.env.REQUIRE_REDIS === '1') throw new Error(`REQUIRE_REDIS=1 but no Redis answers at ${REDIS_URL}`);
  console.warn(`[queue tests] no Redis at ${REDIS_URL}: BullMQ adapter tests skipped (set REQUIRE_REDIS=1 to fail instead)`);
}

describeQueueContract(
  'BullMQ (Redis)',
  async ({ maxAttempts, backoffMs }) => {
    const queueName = `test-${randomUUID()}`;
    const prefix = 'plumbline-test';
    return {
      queue: createBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix, maxAttempts, backoffMs }),
      cleanup: () => obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix }),
    };
  },
  !available,
);

describe.skipIf(!available)('BullMQ queue: adapter specifics', () => {
  it('re-runs a job id once its earlier job has finished (same as the embedded queue)', async () => {
    const queueName = `test-${randomUUID()}`;
    const queue = createBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix: 'plumbline-test', backoffMs: 20 });
    try {
      let runs = 0;
      queue.work(async () => void (runs += 1), { concurrency: 1 });
      await queue.enqueue(job(1), { jobId: 'again' });
      await waitFor(() => runs === 1, 10_000, 'first run');
      await waitFor(async () => (await queue.counts()).completed === 1, 10_000, 'completed');
      await queue.enqueue(job(1), { jobId: 'again' });
      await waitFor(() => runs === 2, 10_000, 'second run');
      expect(runs).toBe(2);
    } finally {
      await queue.close();
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix: 'plumbline-test' });
    }
  });

  it('re-delivers a stalled job whose worker died (lock not renewed)', async () => {
    const queueName = `test-${randomUUID()}`;
    const prefix = 'plumbline-test';
    const queue = createBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix, lockDurationMs: 1000 });
    try {
      await queue.enqueue(job(2), { jobId: 'stalls' });
      // a raw worker takes the job and is then killed without finishing it or releasing its lock; it uses the
      // adapter's stalled-check interval because BullMQ rate-limits stalled checks by the last checker's interval
      let taken = false;
      const doomed = new Worker(queueName, () => {
        taken = true;
        return new Promise<void>(() => undefined);
      }, { connection: { url: REDIS_URL, maxRetriesPerRequest: null }, prefix, lockDuration: 1000, stalledInterval: 1000 });
      await waitFor(() => taken, 10_000, 'doomed worker to take the job');
      await doomed.close(true);
      const seen: string[] = [];
      queue.work(async (j) => void seen.push(j.id), { concurrency: 1 });
      await waitFor(() => seen.length === 1, 15_000, 'stalled job re-delivered');
      expect(seen).toEqual(['stalls']);
    } finally {
      await queue.close();
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName, prefix });
    }
  });

  it('reports ping false when Redis does not answer', async () => {
    const queue = createBullmqQueue({ redisUrl: 'redis://127.0.0.1:1', queueName: `test-${randomUUID()}` });
    try {
      expect(await queue.ping()).toBe(false);
    } finally {
      await queue.close().catch(() => undefined);
    }
  });
});
