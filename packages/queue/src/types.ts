/**
 * The job queue seen by the API (enqueue, counts, ping) and the worker (work). Two adapters share these semantics:
 * the embedded one keeps jobs in SQLite (single host, no extra service), the BullMQ one uses Redis (several hosts).
 *
 * Semantics both adapters keep:
 * - `enqueue` with a `jobId` that is already waiting/active/delayed returns that id and adds nothing (dedup).
 * - A handler that resolves completes the job. A handler that throws `UnrecoverableJobError` sends the job straight
 *   to the dead-letter set. Any other error retries after an exponential backoff
 *   (`backoffMs * 2^(attempt-1)`) until `maxAttempts` attempts were made, then dead-letters it.
 * - `attempt` counts from 1.
 * - A job whose worker died is delivered again once its lease lapses (embedded) / it is detected stalled (BullMQ).
 * - A job that reaches the dead-letter set is reported to the worker's `onDeadLetter`, whether its handler threw on
 *   the last attempt, threw `UnrecoverableJobError`, or its worker process died every time: embedded, the lease
 *   lapsed with every attempt used (noticed by the next poll of any worker of the queue); BullMQ, the job stalled
 *   more than its stalled limit and the worker that next takes it fails it without running the handler.
 */
import type { AnalysisJob } from '@plumbline/contracts';

export interface QueueJob {
  id: string;
  payload: AnalysisJob;
  /** 1 on the first try. */
  attempt: number;
}

export type JobHandler = (job: QueueJob) => Promise<void>;

/** A job that was dead-lettered; `payload` is null when it was not a valid AnalysisJob. */
export interface DeadLetteredJob {
  id: string;
  payload: AnalysisJob | null;
  /** Attempts made, the last one included. */
  attempts: number;
  /** The last error, as text. */
  error: string;
}

/** Called once per dead-lettered job; a rejection is passed to the queue's `onError`, the job stays dead. */
export type DeadLetterHandler = (job: DeadLetteredJob) => Promise<void>;

export interface WorkOptions {
  concurrency: number;
  onDeadLetter?: DeadLetterHandler;
}

export interface EnqueueOptions {
  /** Dedup key; a job with the same id that is not finished makes this call a no-op returning the id.
   *  Must not contain ":" (RangeError). */
  jobId?: string;
  delayMs?: number;
}

export interface QueueWorker {
  /** Stops taking new jobs, waits for in-flight handlers to settle, releases leases. */
  close(): Promise<void>;
}

export interface QueueCounts {
  waiting: number;
  active: number;
  delayed: number;
  /** Jobs whose last attempt failed and that wait for a retry (a subset of waiting + delayed). */
  failed: number;
  /** Dead-lettered: exhausted attempts or unrecoverable. */
  dead: number;
  completed: number;
}

export interface JobQueue {
  /** Adds a job; resolves to its id (the given `jobId` or a generated one). */
  enqueue(payload: AnalysisJob, opts?: EnqueueOptions): Promise<string>;
  work(handler: JobHandler, opts: WorkOptions): QueueWorker;
  counts(): Promise<QueueCounts>;
  ping(): Promise<boolean>;
  /** Closes workers started by `work` and releases connections (does not close a database it was given). */
  close(): Promise<void>;
}

export interface CommonQueueOptions {
  /** Called with infrastructure errors the queue recovers from by itself (database busy, Redis connection lost),
   *  so the service can log them; the queue package does no logging of its own. */
  onError?: (err: unknown) => void;
  /** Attempts before dead-lettering, including the first (default 5). */
  maxAttempts?: number;
  /** Delay before the first retry; doubles each retry (default 1000 ms). */
  backoffMs?: number;
}

export interface EmbeddedQueueOptions extends CommonQueueOptions {
  /** Lease length of a claimed job (default 30 s); renewed every `leaseMs / 3` while the handler runs. */
  leaseMs?: number;
  /** Poll interval when idle (default 500 ms); an enqueue in the same process wakes workers at once. */
  pollIntervalMs?: number;
  /** Queue name inside the jobs table, so several queues can share one database (default `analysis`). */
  queueName?: string;
}

export interface BullmqQueueOptions extends CommonQueueOptions {
  redisUrl: string;
  queueName?: string;
  /** Redis key prefix (default `plumbline`). */
  prefix?: string;
  /** Completed jobs kept (default 1000) and failed/dead jobs kept (default 5000). */
  keepCompleted?: number;
  keepFailed?: number;
  /** Lock duration of an active job (default 30 s); a job not renewed in time is stalled and re-delivered.
   *  Stalled checks run every lockDurationMs / 2 (at least 1 s); give every worker of a queue the same value,
   *  since BullMQ rate-limits stalled checks by the interval of the last worker that checked. A stalled re-delivery
   *  does not count as an attempt in BullMQ (it does in the embedded queue). */
  lockDurationMs?: number;
}

/** Config for `createQueue`: with `redisUrl` the BullMQ adapter is used, otherwise the embedded one. */
export interface QueueConfig extends CommonQueueOptions {
  redisUrl?: string;
  queueName?: string;
  prefix?: string;
  leaseMs?: number;
  pollIntervalMs?: number;
}

/**
 * Factories exported by `@plumbline/queue` (signatures). `db` is the handle from `@plumbline/store`'s
 * `openDatabase` (the jobs table comes from the shared migrations).
 * - `createEmbeddedQueue(db, opts?)`
 * - `createBullmqQueue(opts)`
 * - `createQueue(config, db)` — BullMQ when `config.redisUrl` is set, embedded otherwise.
 */
export type CreateEmbeddedQueue = (db: import('better-sqlite3').Database, opts?: EmbeddedQueueOptions) => JobQueue;
export type CreateBullmqQueue = (opts: BullmqQueueOptions) => JobQueue;
export type CreateQueue = (config: QueueConfig, db: import('better-sqlite3').Database) => JobQueue;
