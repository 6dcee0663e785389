/**
 * Test helper run as a child process: a worker on the database file argv[2] whose analysis kills its own process
 * (SIGKILL, so no code of ours runs after it), as a bundle that crashes the worker would. Queue settings match
 * dead-letter.test.ts: 2 attempts, 300 ms lease.
 */
import pino from 'pino';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createEmbeddedQueue } from '@plumbline/queue';
import { startWorker } from './worker.ts';

const dbPath = process.argv[2];
if (!dbPath) throw new Error('usage: crash-worker-process.ts <database file>');
const db = openDatabase(dbPath);
const queue = createEmbeddedQueue(db, { pollIntervalMs: 10, leaseMs: 300, maxAttempts: 2 });
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
