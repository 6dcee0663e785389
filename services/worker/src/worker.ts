import type { Logger } from 'pino';
import type { Config } from '@plumbline/config';
import type { BlobStore, Store } from '@plumbline/store';
import type { DeadLetterHandler, JobQueue, QueueWorker } from '@plumbline/queue';
import { createAnalyseRunProcessor, type AnalyseRunDeps, type Analyze } from './processors/analyse-run.ts';
import { startWebhookDispatcher, type WebhookDispatcher } from './webhooks/dispatcher.ts';
import { createPolicyResolver } from './policy.ts';
import { startMaintenance } from './maintenance.ts';
import { createAfterRecorded, withStoredPolicies } from './fleet-hooks.ts';
import { createLocalLedger } from './ledger/local-ledger.ts';
import type { AnalysisLedger } from './ledger/ledger.ts';

export interface WorkerDeps {
  store: Store;
  blobs: BlobStore;
  queue: JobQueue;
  logger: Logger;
  clock: { now(): Date };
  analyze: Analyze;
  /** Must match the queue's retry setting (default 5). */
  maxAttempts?: number;
  onJobFinished?: AnalyseRunDeps['onJobFinished'];
  fetch?: typeof fetch;
  dispatcherIntervalMs?: number;
}

/**
 * A dead-lettered analysis job marks its run `failed` (under the job's key, so a newer submission is untouched).
 * The processor already does so when its last attempt throws; this also covers a worker process that died on every
 * attempt, where no code of ours ran the last time. The startup re-enqueue only takes queued/analysing runs.
 */
export function failRunOnDeadLetter(ledger: AnalysisLedger, logger: Logger): DeadLetterHandler {
  return async (dead) => {
    if (!dead.payload?.attempt_tag) return;
    const reason = `analysis did not complete after ${dead.attempts} attempts: ${dead.error}`;
    await ledger.fail(dead.payload.run, dead.payload.attempt_tag, reason);
    logger.warn({ runId: dead.payload.run, jobKey: dead.payload.attempt_tag, attempts: dead.attempts, error: dead.error }, 'analysis job dead-lettered');
  };
}

export interface RunningWorker {
  dispatcher: WebhookDispatcher;
  /** Re-enqueues runs left queued/analysing (after a restart); the queue dedups by job key. */
  recover(): Promise<number>;
  close(): Promise<void>;
}

/**
 * Starts analysis workers on the queue, the webhook dispatcher and the upload housekeeping. Used by the standalone worker (Redis mode) and,
 * in embedded mode, inside the API process (`startEmbeddedWorker`).
 */
export async function startWorker(config: Pick<Config, 'workerConcurrency' | 'policyFile'>, deps: WorkerDeps): Promise<RunningWorker> {
  const policyFor = withStoredPolicies(deps.store, createPolicyResolver(config.policyFile));
  const ledger = createLocalLedger({
    store: deps.store,
    blobs: deps.blobs,
    policyFor,
    clock: deps.clock,
    afterRecorded: createAfterRecorded(deps.store, deps.logger.child({ component: 'fleet' })),
  });
  const processor = createAnalyseRunProcessor({
    ledger,
    analyze: deps.analyze,
    logger: deps.logger.child({ component: 'worker' }),
    maxAttempts: deps.maxAttempts ?? 5,
    ...(deps.onJobFinished ? { onJobFinished: deps.onJobFinished } : {}),
  });
  const recover = async (): Promise<number> => {
    let n = 0;
    for (const t of deps.store.runs.pendingTickets()) {
      await deps.queue.enqueue({ run: t.run, sha256: t.sha256, attempt_tag: t.job_key, ...(t.policy ? { policy: t.policy } : {}) }, { jobId: t.job_key });
      n++;
    }
    return n;
  };
  const recovered = await recover();
  if (recovered > 0) deps.logger.info({ recovered }, 're-enqueued pending runs');
  const qw: QueueWorker = deps.queue.work(processor, {
    concurrency: config.workerConcurrency,
    onDeadLetter: failRunOnDeadLetter(ledger, deps.logger.child({ component: 'worker' })),
  });
  const dispatcher = startWebhookDispatcher({
    webhooks: deps.store.webhooks,
    logger: deps.logger.child({ component: 'webhooks' }),
    clock: deps.clock,
    ...(deps.fetch ? { fetch: deps.fetch } : {}),
    ...(deps.dispatcherIntervalMs ? { intervalMs: deps.dispatcherIntervalMs } : {}),
  });
  const stopMaintenance = startMaintenance({ store: deps.store, blobs: deps.blobs, logger: deps.logger.child({ component: 'maintenance' }), clock: deps.clock });
  return {
    dispatcher,
    recover,
    async close() {
      stopMaintenance();
      await qw.close();
      await dispatcher.stop();
    },
  };
}

export interface RemoteWorkerDeps {
  /** Usually `createRemoteLedger(...)`: the API over HTTP instead of the database. */
  ledger: AnalysisLedger;
  queue: JobQueue;
  logger: Logger;
  analyze: Analyze;
  maxAttempts?: number;
  onJobFinished?: AnalyseRunDeps['onJobFinished'];
}

/**
 * A worker on another host (Redis mode with PLUMBLINE_API_URL): only analysis jobs, through the API. Webhook delivery,
 * upload housekeeping and the re-enqueue of pending runs need the database, so they stay with the API host's worker.
 */
export function startRemoteWorker(config: Pick<Config, 'workerConcurrency'>, deps: RemoteWorkerDeps): { close(): Promise<void> } {
  const processor = createAnalyseRunProcessor({
    ledger: deps.ledger,
    analyze: deps.analyze,
    logger: deps.logger.child({ component: 'worker' }),
    maxAttempts: deps.maxAttempts ?? 5,
    ...(deps.onJobFinished ? { onJobFinished: deps.onJobFinished } : {}),
  });
  const qw = deps.queue.work(processor, {
    concurrency: config.workerConcurrency,
    onDeadLetter: failRunOnDeadLetter(deps.ledger, deps.logger.child({ component: 'worker' })),
  });
  return { close: () => qw.close() };
}

/** Embedded mode: the worker runs in the API process against the same database and embedded queue. */
export const startEmbeddedWorker = startWorker;
