import { Redis } from 'ioredis';

/**
 * True when a Redis server answers PING at `url` within `timeoutMs`. Never retries and never throws: used to decide
 * between the BullMQ adapter's tests (or benchmarks) running and being skipped with a notice.
 */
export async function redisAnswers(url: string, timeoutMs = 1000): Promise<boolean> {
  const client = new Redis(url, { lazyConnect: true, connectTimeout: timeoutMs, maxRetriesPerRequest: 0, retryStrategy: () => null });
  try {
    await client.connect();
    return (await client.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    client.disconnect();
  }
}
