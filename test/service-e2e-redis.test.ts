import { randomUUID } from 'node:crypto';
import { Redis } from 'ioredis';
import { describe, it } from 'vitest';
import { createBullmqQueue, obliterateBullmqQueue } from '@plumbline/queue';
import { runServiceFlow } from './service-flow.ts';

const REDIS_URL = 'redis://127.0.0.1:6379';

async function redisAnswers(): Promise<boolean> {
  const r = new Redis(REDIS_URL, { lazyConnect: true, connectTimeout: 1000, maxRetriesPerRequest: 0, retryStrategy: () => null });
  try {
    await r.connect();
    return (await r.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    r.disconnect();
  }
}

const available = await redisAnswers();
const required = process.env.REQUIRE_REDIS === '1';
if (!available && !required) console.warn(`[service-e2e-redis] skipped: no Redis answers at ${REDIS_URL} (set REQUIRE_REDIS=1 to make this an error)`);

// Same flow with BullMQ on a real Redis, a fresh queue name per run, removed afterwards.
describe.skipIf(!available && !required)('service end to end, Redis mode (BullMQ)', () => {
  it('push -> analysed -> query -> review -> signed webhooks', async () => {
    const queueName = `test-${randomUUID()}`;
    try {
      await runServiceFlow({ label: 'redis', makeQueue: () => createBullmqQueue({ redisUrl: REDIS_URL, queueName, backoffMs: 50 }) });
    } finally {
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName });
    }
  }, 120_000);
});
