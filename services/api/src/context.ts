import type { Readable } from 'node:stream';
import type { Logger } from 'pino';
import type * as contracts from '@plumbline/contracts';
import type { Config } from '@plumbline/config';
import type { BlobStore, Store } from '@plumbline/store';
import type { JobQueue } from '@plumbline/queue';
import type { UploadInspector } from '@plumbline/bundle';
import type { ServiceMetrics } from './metrics.ts';
import type { TokenBucketLimiter } from './plugins/rate-limit.ts';
import type { OpenApiRegistry } from './plugins/openapi.ts';
import type { RouteContext } from './plugins/route-types.ts';

/** Starts the streaming upload check (see `createUploadInspector` in the bundle package). */
export type InspectUpload = (opts: { name: string; maxCompressedBytes: number }) => UploadInspector;

export interface Clock {
  now(): Date;
}

/** What upload validation needs from a bundle: its parsed manifest. Throws BundleError for a bad archive. */
export type InspectBundle = (archivePath: string) => Promise<{ manifest: contracts.RunManifest }>;

/**
 * The trajectory of a bundle as CSV for the download route. The route asks only for `original`: the repaired
 * trajectory is produced by the worker at analysis time and stored as a blob with the report.
 */
export type TrajectoryCsv = (archivePath: string, variant: 'original' | 'repaired') => Promise<string | Readable>;

export interface AppDeps {
  store: Store;
  blobs: BlobStore;
  queue: JobQueue;
  logger: Logger;
  clock: Clock;
  inspectBundle: InspectBundle;
  /**
   * The same check run on an upload while it arrives (no second pass over the stored file). Absent: the real
   * streaming check when `inspectBundle` is the library's, otherwise uploads are inspected after storing.
   */
  inspectUpload?: InspectUpload;
  /** Absent: the trajectory.csv route answers 503 until wired. */
  trajectoryCsv?: TrajectoryCsv;
  metrics?: ServiceMetrics;
  /** Dashboard build directory; null/absent = no static files. */
  dashboardDir?: string | null;
}

/** Everything a route file needs: the app, deps, config, the route helper context. */
export interface ApiContext extends RouteContext {
  openapi: OpenApiRegistry;
  config: Config;
  deps: AppDeps;
  metrics: ServiceMetrics;
  uploadLimiter: TokenBucketLimiter;
}
