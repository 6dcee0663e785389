/**
 * Test helper run as a child process: a worker on the database file argv[2] whose analysis kills its own process
 * (SIGKILL, so no code of ours runs after it), as a bundle that crashes the worker would. With argv[3] (a BullMQ
 * queue name) the queue is BullMQ on TEST_REDIS_URL, else the embedded queue in the same file. Queue settings match
 * dead-letter.test.ts: 2 attempts, 300 ms lease (embedded) or 1 s lock (BullMQ).
 */
import pino from 'pino';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createBullmqQueue, createEmbeddedQueue } from '@plumbline/queue';
import { startWorker } from './worker.ts';

const dbPath = process.argv[2];
if (!dbPath) throw new Error('usage: crash-worker-process.ts <database file>');
const db = openDatabase(dbPath);
const bullQueueName = process.argv[3];
const queue = bullQueueName
  ? createBullmqQueue({ redisUrl: process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379', queueName: bullQueueName, prefix: 'plumbline-test', maxAttempts: 2, lockDurationMs: 1000 })
  : createEmbeddedQueue(db, { pollIntervalMs: 10, leaseMs: 300, maxAttempts: 2 });
await startWorker(
  { workerConcurrency: 1, policyFile: null },
  {
    store: createStore(db), blobs: createBlobStore('/nonexistent-blobs'), queue, logger: pino({ level: 'silent' }),
    clock: { now: () => new Date() }, maxAttempts: 2,
    analyze: () => {
      process.kill(process.pid, 'SIGKILL');
      return new Promise(() => undefined);
    },
  },
);
