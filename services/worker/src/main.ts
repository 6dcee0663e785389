/**
 * Standalone worker (`npm run worker`): analyses runs from the Redis queue and delivers webhooks. Needs REDIS_URL and
 * the data directory shared with the API (the SQLite file and the blobs; see docs/scaling.md).
 */
import pino from 'pino';
import { loadConfig } from '@plumbline/config';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createQueue } from '@plumbline/queue';
import { startWorker } from './worker.ts';
import { createThreadedAnalyze } from './threaded-analyze.ts';

const config = loadConfig();
const logger = pino({ level: config.logLevel, base: { service: 'worker' } });
if (!config.redisUrl) {
  logger.fatal('REDIS_URL is unset: the standalone worker needs Redis; in embedded mode the worker runs inside `plumbline serve`');
  process.exit(2);
}
const db = openDatabase(config.dbPath);
const store = createStore(db);
const queue = createQueue({ redisUrl: config.redisUrl }, db);
// The analysis runs in worker threads so lease renewals and webhook deliveries keep running during long jobs.
const threads = createThreadedAnalyze(config.workerConcurrency);
const worker = await startWorker(config, {
  store,
  blobs: createBlobStore(config.blobDir),
  queue,
  logger,
  clock: { now: () => new Date() },
  analyze: threads.analyze,
});
logger.info({ concurrency: config.workerConcurrency }, 'worker started');

let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal }, 'stopping: finishing jobs in flight');
    void (async () => {
      await worker.close();
      await threads.close();
      await queue.close();
      db.close();
      process.exit(0);
    })();
  });
}
