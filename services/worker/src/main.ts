/**
 * Standalone worker (`npm run worker`): analyses runs from the Redis queue. Two modes (see docs/scaling.md):
 * - local (default): opens the API's SQLite file and blob directory on this host; also delivers webhooks, sweeps
 *   stale uploads and re-enqueues pending runs at start-up.
 * - remote (PLUMBLINE_API_URL + an admin PLUMBLINE_TOKEN): no database; starts jobs and posts results over HTTP, reads
 *   bundles from the blob directory when shared, else downloads them from the API. Runs on any host.
 */
import pino from 'pino';
import { loadConfig, type Config } from '@plumbline/config';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createBullmqQueue, createQueue } from '@plumbline/queue';
import { startRemoteWorker, startWorker } from './worker.ts';
import { createThreadedAnalyze } from './threaded-analyze.ts';
import { createRemoteLedger } from './ledger/remote-ledger.ts';

const config = loadConfig();
const logger = pino({ level: config.logLevel, base: { service: 'worker' }, redact: ['token'] });
if (!config.redisUrl) {
  logger.fatal('REDIS_URL is unset: the standalone worker needs Redis; in embedded mode the worker runs inside `plumbline serve`');
  process.exit(2);
}
if (config.apiUrl && !config.token) {
  logger.fatal('PLUMBLINE_API_URL is set but PLUMBLINE_TOKEN is not: a remote worker needs an admin token');
  process.exit(2);
}
// The analysis runs in worker threads so lease renewals and webhook deliveries keep running during long jobs.
const threads = createThreadedAnalyze(config.workerConcurrency, { twoThreads: config.analysisTwoThreads });
const stopper = config.apiUrl ? startRemote(config, config.apiUrl, config.token ?? '') : await startLocal(config);

function startRemote(config: Config, apiUrl: string, token: string): () => Promise<void> {
  const queue = createBullmqQueue({ redisUrl: config.redisUrl ?? '' });
  const blobs = createBlobStore(config.blobDir);
  const worker = startRemoteWorker(config, {
    ledger: createRemoteLedger({ apiUrl, token, blobPathOf: (sha) => blobs.pathOf(sha) }),
    queue,
    logger,
    analyze: threads.analyze,
  });
  logger.info({ concurrency: config.workerConcurrency, apiUrl, blobDir: config.blobDir }, 'remote worker started (no database)');
  return async () => {
    await worker.close();
    await queue.close();
  };
}

async function startLocal(config: Config): Promise<() => Promise<void>> {
  const db = openDatabase(config.dbPath);
  const queue = createQueue({ redisUrl: config.redisUrl ?? '' }, db);
  const worker = await startWorker(config, {
    store: createStore(db),
    blobs: createBlobStore(config.blobDir),
    queue,
    logger,
    clock: { now: () => new Date() },
    analyze: threads.analyze,
  });
  logger.info({ concurrency: config.workerConcurrency }, 'worker started');
  return async () => {
    await worker.close();
    await queue.close();
    db.close();
  };
}

let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal }, 'stopping: finishing jobs in flight');
    void (async () => {
      await stopper();
      await threads.close();
      process.exit(0);
    })();
  });
}
