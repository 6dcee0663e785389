import { randomUUID } from 'node:crypto';
import { Redis } from 'ioredis';
import { describe, expect, it } from 'vitest';
import { createBullmqQueue, obliterateBullmqQueue } from './bullmq.ts';
import { describeQueueContract, job, waitFor } from './testing/queue-contract.ts';

const REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';

async function redisAnswers(): Promise<boolean> {
  const client = new Redis(REDIS_URL, { lazyConnect: true, maxRetriesPerRequest: 0, connectTimeout: 1000, retryStrategy: () => null });
  client.on('error', () => undefined);
  try {
    await client.connect();
    return (await client.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    client.disconnect();
  }
}

const available = await redisAnswers();
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

  it('reports ping false when Redis does not answer', async () => {
    const queue = createBullmqQueue({ redisUrl: 'redis://127.0.0.1:1', queueName: `test-${randomUUID()}` });
    try {
      expect(await queue.ping()).toBe(false);
    } finally {
      await queue.close().catch(() => undefined);
    }
  });
});
