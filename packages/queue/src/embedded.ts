import { randomUUID } from 'node:crypto';
import { EventEmitter } from 'node:events';
import { AnalysisJob } from '@plumbline/contracts';
import type Database from 'better-sqlite3';
import { UnrecoverableJobError } from './errors.ts';
import { createJobTable, type ClaimedJob, type JobTable } from './job-table.ts';
import { retryDelayMs } from './backoff.ts';
import type { DeadLetterHandler, EmbeddedQueueOptions, JobHandler, JobQueue, QueueWorker } from './types.ts';

// One wake-up channel per database handle, so an enqueue wakes every worker of that database in this process.
const wakeups = new WeakMap<Database.Database, EventEmitter>();
function wakeupOf(db: Database.Database): EventEmitter {
  let emitter = wakeups.get(db);
  if (!emitter) {
    emitter = new EventEmitter();
    emitter.setMaxListeners(0);
    wakeups.set(db, emitter);
  }
  return emitter;
}

/** Completed jobs are kept this long (for counts and dedup of late re-sends), then pruned by the workers. */
const KEEP_COMPLETED_MS = 24 * 3600_000;
const PRUNE_EVERY_MS = 60_000;

interface Settings {
  onError: (err: unknown) => void;
  maxAttempts: number;
  backoffMs: number;
  leaseMs: number;
  pollIntervalMs: number;
  queueName: string;
}

function errorText(err: unknown): string {
  return err instanceof Error ? `${err.name}: ${err.message}` : String(err);
}

/** The payload of a dead job for the dead-letter hook; null when it is not a valid AnalysisJob. */
function payloadOrNull(text: string): AnalysisJob | null {
  try {
    return parsePayload(text);
  } catch {
    return null;
  }
}

/** Calls the dead-letter hook; its failure goes to onError (the job stays dead either way). */
function reportDead(s: Settings, hook: DeadLetterHandler | undefined, id: string, payload: string, attempts: number, error: string): Promise<void> {
  if (!hook) return Promise.resolve();
  return hook({ id, payload: payloadOrNull(payload), attempts, error }).catch(s.onError);
}

/** A payload that is not a valid AnalysisJob will never succeed: unrecoverable. */
function parsePayload(text: string): AnalysisJob {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new UnrecoverableJobError(`job payload is not JSON: ${(err as Error).message}`);
  }
  const parsed = AnalysisJob.safeParse(value);
  if (!parsed.success) throw new UnrecoverableJobError(`invalid job payload: ${parsed.error.message}`);
  return parsed.data;
}

/**
 * Runs one claimed job: heartbeat while the handler runs, then complete, retry later, or dead-letter. Never
 * rejects: if the bookkeeping itself fails (database busy or closed), the lease lapses and the job is claimed again.
 */
async function runJob(table: JobTable, s: Settings, claimed: ClaimedJob, handler: JobHandler, onDead?: DeadLetterHandler): Promise<void> {
  const beat = setInterval(() => {
    const now = Date.now();
    try {
      table.renew(claimed.id, claimed.lease_token, now + s.leaseMs, now);
    } catch (err) {
      s.onError(err); // a missed renewal only shortens the lease; the next beat tries again
    }
  }, Math.max(10, Math.floor(s.leaseMs / 3)));
  let failure: unknown = null;
  let failed = false;
  try {
    await handler({ id: claimed.id, payload: parsePayload(claimed.payload), attempt: claimed.attempts });
  } catch (err) {
    failed = true;
    failure = err;
  } finally {
    clearInterval(beat);
  }
  try {
    const now = Date.now();
    if (!failed) {
      table.complete(claimed.id, claimed.lease_token, now);
      return;
    }
    const last = failure instanceof UnrecoverableJobError || claimed.attempts >= claimed.max_attempts;
    const error = errorText(failure);
    const moved = table.fail(claimed.id, claimed.lease_token, error, last ? null : now + retryDelayMs(claimed.attempts, s.backoffMs), now);
    if (moved && last) await reportDead(s, onDead, claimed.id, claimed.payload, claimed.attempts, error);
  } catch (err) {
    s.onError(err); // see above: the lease will lapse and the job run again
  }
}

function startWorker(db: Database.Database, table: JobTable, s: Settings, handler: JobHandler, concurrency: number, onDead?: DeadLetterHandler): QueueWorker {
  if (!Number.isInteger(concurrency) || concurrency < 1) throw new RangeError(`concurrency must be a positive integer, got ${concurrency}`);
  const wake = wakeupOf(db);
  const inFlight = new Set<Promise<void>>();
  let running = true;
  let timer: NodeJS.Timeout | undefined;
  let prunedAt = 0;

  const fill = (): void => {
    if (timer) clearTimeout(timer);
    timer = undefined;
    if (running && db.open) {
      try {
        for (const r of table.reap(Date.now())) {
          const p: Promise<void> = reportDead(s, onDead, r.id, r.payload, r.attempts, r.last_error).finally(() => inFlight.delete(p));
          inFlight.add(p);
        }
      } catch (err) {
        s.onError(err); // busy database: the next poll reaps them
      }
    }
    while (running && inFlight.size < concurrency) {
      if (!db.open) {
        running = false;
        return;
      }
      let claimed: ClaimedJob | null;
      try {
        claimed = table.claim(Date.now(), s.leaseMs);
      } catch (err) {
        s.onError(err); // e.g. SQLITE_BUSY beyond busy_timeout: try again at the next poll
        break;
      }
      if (!claimed) break;
      const p: Promise<void> = runJob(table, s, claimed, handler, onDead).finally(() => {
        inFlight.delete(p);
        if (running) setImmediate(fill);
      });
      inFlight.add(p);
    }
    const now = Date.now();
    if (running && now - prunedAt > PRUNE_EVERY_MS) {
      prunedAt = now;
      try {
        table.pruneCompleted(now - KEEP_COMPLETED_MS);
      } catch (err) {
        s.onError(err); // pruning is housekeeping; a busy database just postpones it
      }
    }
    if (running) timer = setTimeout(fill, s.pollIntervalMs);
  };
  const onWake = (queueName: string): void => {
    if (queueName === s.queueName && running) setImmediate(fill);
  };
  wake.on('enqueued', onWake);
  setImmediate(fill);

  return {
    async close() {
      running = false;
      wake.off('enqueued', onWake);
      if (timer) clearTimeout(timer);
      await Promise.allSettled([...inFlight]);
    },
  };
}

/**
 * Job queue in the SQLite database of the store (`jobs` table). Durable across restarts; a claimed job is leased
 * for `leaseMs` and the lease renewed while its handler runs, so a job whose process died is claimed again after
 * the lease lapses. Polls every `pollIntervalMs` and is woken at once by an enqueue in the same process.
 */
export function createEmbeddedQueue(db: Database.Database, opts: EmbeddedQueueOptions = {}): JobQueue {
  const s: Settings = {
    maxAttempts: opts.maxAttempts ?? 5,
    backoffMs: opts.backoffMs ?? 1000,
    leaseMs: opts.leaseMs ?? 30_000,
    pollIntervalMs: opts.pollIntervalMs ?? 500,
    queueName: opts.queueName ?? 'analysis',
    onError: opts.onError ?? (() => undefined),
  };
  const table = createJobTable(db, s.queueName);
  const workers = new Set<QueueWorker>();

  return {
    async enqueue(payload, enqueueOpts = {}) {
      const id = enqueueOpts.jobId ?? randomUUID();
      // the BullMQ adapter cannot take ":" in ids; refuse it here too so both adapters accept the same ids
      if (id.includes(':') || id.length === 0) throw new RangeError(`job id must be non-empty and contain no ":": ${id}`);
      const now = Date.now();
      table.insert(id, JSON.stringify(payload), now + Math.max(0, enqueueOpts.delayMs ?? 0), s.maxAttempts, now);
      wakeupOf(db).emit('enqueued', s.queueName);
      return id;
    },
    work(handler, workOpts) {
      const worker = startWorker(db, table, s, handler, workOpts.concurrency, workOpts.onDeadLetter);
      workers.add(worker);
      return {
        async close() {
          workers.delete(worker);
          await worker.close();
        },
      };
    },
    async counts() {
      const c = table.counts(Date.now());
      return { waiting: c.waiting, active: c.active, delayed: c.delayed, failed: c.retrying, dead: c.dead, completed: c.completed };
    },
    async ping() {
      try {
        return db.prepare('SELECT 1').pluck().get() === 1;
      } catch {
        return false;
      }
    },
    async close() {
      await Promise.all([...workers].map((w) => w.close()));
      workers.clear();
    },
  };
}
