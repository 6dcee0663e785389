import { redisAnswers } from '@plumbline/queue';

/** The Redis the tests use: TEST_REDIS_URL, else the local server on the default port. */
export const TEST_REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';

/**
 * Whether Redis-backed tests should run. With no Redis they are skipped with a printed notice, unless
 * REQUIRE_REDIS=1 (CI): then they run anyway and fail, so a missing Redis can never pass silently.
 */
export async function redisGate(label: string, url = TEST_REDIS_URL): Promise<boolean> {
  if (await redisAnswers(url)) return true;
  if (process.env.REQUIRE_REDIS === '1') return true;
  console.warn(`[${label}] skipped: no Redis answers at ${url} (set REQUIRE_REDIS=1 to make this an error)`);
  return false;
}
