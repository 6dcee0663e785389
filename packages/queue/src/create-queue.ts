import type Database from 'better-sqlite3';
import { createBullmqQueue } from './bullmq.ts';
import { createEmbeddedQueue } from './embedded.ts';
import type { JobQueue, QueueConfig } from './types.ts';

/** BullMQ on Redis when `config.redisUrl` is set (several worker hosts), otherwise the embedded SQLite queue. */
export function createQueue(config: QueueConfig, db: Database.Database): JobQueue {
  const retry = {
    ...(config.onError !== undefined ? { onError: config.onError } : {}),
    ...(config.maxAttempts !== undefined ? { maxAttempts: config.maxAttempts } : {}),
    ...(config.backoffMs !== undefined ? { backoffMs: config.backoffMs } : {}),
  };
  if (config.redisUrl) {
    return createBullmqQueue({
      redisUrl: config.redisUrl,
      ...retry,
      ...(config.queueName !== undefined ? { queueName: config.queueName } : {}),
      ...(config.prefix !== undefined ? { prefix: config.prefix } : {}),
      ...(config.leaseMs !== undefined ? { lockDurationMs: config.leaseMs } : {}),
    });
  }
  return createEmbeddedQueue(db, {
    ...retry,
    ...(config.queueName !== undefined ? { queueName: config.queueName } : {}),
    ...(config.leaseMs !== undefined ? { leaseMs: config.leaseMs } : {}),
    ...(config.pollIntervalMs !== undefined ? { pollIntervalMs: config.pollIntervalMs } : {}),
  });
}
