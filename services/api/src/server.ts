/**
 * Opens the API's resources from the config and listens. Run directly (`node --import tsx services/api/src/server.ts`)
 * it is the API-only process of a Redis deployment (workers run separately, see docs/scaling.md); in embedded mode
 * use `plumbline serve`, which runs this API and the worker in one process.
 */
import { mkdirSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { Logger } from 'pino';
import { loadConfig, type Config } from '@plumbline/config';
import { createBlobStore, createStore, openDatabase, type Db } from '@plumbline/store';
import { createQueue } from '@plumbline/queue';
import { inspectBundle } from '@plumbline/bundle';
import { buildApp, type AppDeps } from './app.ts';
import { originalTrajectoryStream } from './original-trajectory.ts';
import { createLogger } from './logger.ts';
import { createServiceMetrics } from './metrics.ts';

export const DEFAULT_DASHBOARD_DIR = fileURLToPath(new URL('../../dashboard/dist/', import.meta.url));

export interface ApiResources {
  db: Db;
  deps: AppDeps;
  close(): Promise<void>;
}

/** Database, blob store, queue and the bundle seams, from the config. */
export function openResources(config: Config, logger: Logger, extra: Partial<AppDeps> = {}): ApiResources {
  mkdirSync(config.dataDir, { recursive: true });
  const db = openDatabase(config.dbPath);
  const queue = createQueue(config.redisUrl ? { redisUrl: config.redisUrl } : {}, db);
  const deps: AppDeps = {
    store: createStore(db),
    blobs: createBlobStore(config.blobDir),
    queue,
    logger,
    clock: { now: () => new Date() },
    inspectBundle,
    // The original trajectory is streamed from the bundle; the repaired one is stored by the worker with the report.
    trajectoryCsv: (path) => originalTrajectoryStream(path),
    metrics: createServiceMetrics(),
    dashboardDir: DEFAULT_DASHBOARD_DIR,
    ...extra,
  };
  return {
    db,
    deps,
    async close() {
      await queue.close();
      db.close();
    },
  };
}

/** Builds the app and listens on the configured host and port; resolves to the listening app and its URL. */
export async function startServer(config: Config, deps: AppDeps) {
  const app = await buildApp(config, deps);
  const url = await app.listen({ host: config.host, port: config.port });
  return { app, url };
}

async function main(): Promise<void> {
  const config = loadConfig();
  const logger = createLogger({ level: config.logLevel, service: 'api' });
  if (config.mode !== 'redis') {
    logger.fatal('REDIS_URL is unset: in embedded mode run `plumbline serve` (API and worker in one process)');
    process.exit(2);
  }
  const res = openResources(config, logger);
  const { app, url } = await startServer(config, res.deps);
  logger.info({ url }, 'api listening');
  const stop = async () => {
    await app.close();
    await res.close();
    process.exit(0);
  };
  process.once('SIGINT', () => void stop());
  process.once('SIGTERM', () => void stop());
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) await main();
