import { randomUUID } from 'node:crypto';
import { describe, it } from 'vitest';
import { createBullmqQueue, obliterateBullmqQueue } from '@plumbline/queue';
import { runServiceFlow } from './service-flow.ts';
import { redisGate, TEST_REDIS_URL } from './redis-gate.ts';

const REDIS_URL = TEST_REDIS_URL;


const runRedis = await redisGate('service-e2e-redis');

// Same flow with BullMQ on a real Redis, a fresh queue name per run, removed afterwards.
describe.skipIf(!runRedis)('service end to end, Redis mode (BullMQ)', () => {
  it('push -> analysed -> query -> review -> signed webhooks', async () => {
    const queueName = `test-${randomUUID()}`;
    try {
      await runServiceFlow({ label: 'redis', makeQueue: () => createBullmqQueue({ redisUrl: REDIS_URL, queueName, backoffMs: 50 }) });
    } finally {
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName });
    }
  }, 120_000);
});
