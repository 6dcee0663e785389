/**
 * Worker child of the Burst benchmark: the service's worker (startWorker: analyse-run processor, exactly-once
 * recording) over the shared data directory, on the embedded queue or on a BullMQ queue of the given name.
 * Usage: node --import tsx bench/lib/burst-worker.ts <dataDir> <embedded | redis://…> [queueName]
 * Prints `BENCH_READY {}` once taking jobs; finishes jobs in flight and exits on SIGTERM.
 */
import { join } from 'node:path';
import pino from 'pino';
import { analyzeBundle } from '@plumbline/analysis';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createBullmqQueue, createEmbeddedQueue } from '@plumbline/queue';
import { startWorker } from '@plumbline/worker';

const [dataDir, queueArg, queueName] = process.argv.slice(2);
if (!dataDir || !queueArg) throw new Error('usage: burst-worker.ts <dataDir> <embedded | redis://…> [queueName]');
const db = openDatabase(join(dataDir, 'plumbline.sqlite'));
const queue = queueArg === 'embedded'
  ? createEmbeddedQueue(db, { pollIntervalMs: 50 })
  : createBullmqQueue({ redisUrl: queueArg, queueName: queueName ?? 'bench-burst' });
const worker = await startWorker({ workerConcurrency: 1, policyFile: null }, {
  store: createStore(db),
  blobs: createBlobStore(join(dataDir, 'blobs')),
  queue,
  logger: pino({ level: 'silent' }),
  clock: { now: () => new Date() },
  analyze: (path, policy) => analyzeBundle(path, policy),
});
console.log('BENCH_READY {"port":0}');
process.once('SIGTERM', () => {
  void (async () => {
    await worker.close();
    await queue.close();
    db.close();
    process.exit(0);
  })();
});
