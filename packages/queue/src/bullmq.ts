import { AnalysisJob } from '@plumbline/contracts';
import { Queue, UnrecoverableError, Worker, type Job } from 'bullmq';
import { Redis } from 'ioredis';
import { randomUUID } from 'node:crypto';
import { UnrecoverableJobError } from './errors.ts';
import type { BullmqQueueOptions, JobHandler, JobQueue, QueueCounts, QueueWorker } from './types.ts';

type BullJob = Job<AnalysisJob, void, string>;

/** Maps our handler onto a BullMQ processor: invalid payloads and UnrecoverableJobError skip the retries. */
function processorOf(handler: JobHandler): (job: BullJob) => Promise<void> {
  return async (job) => {
    const parsed = AnalysisJob.safeParse(job.data);
    if (!parsed.success) throw new UnrecoverableError(`invalid job payload: ${parsed.error.message}`);
    try {
      await handler({ id: job.id ?? '', payload: parsed.data, attempt: job.attemptsMade + 1 });
    } catch (err) {
      if (err instanceof UnrecoverableJobError) throw new UnrecoverableError(err.message);
      throw err;
    }
  };
}

/**
 * Job queue on Redis with BullMQ: attempts with exponential backoff, `UnrecoverableError` for jobs that cannot
 * succeed, stalled-job detection (a job whose lock is not renewed within `lockDurationMs` goes back to waiting),
 * jobId dedup, and bounded retention of completed and failed jobs.
 */
export function createBullmqQueue(opts: BullmqQueueOptions): JobQueue {
  const queueName = opts.queueName ?? 'analysis';
  const prefix = opts.prefix ?? 'plumbline';
  const maxAttempts = opts.maxAttempts ?? 5;
  const backoffMs = opts.backoffMs ?? 1000;
  const lockDurationMs = opts.lockDurationMs ?? 30_000;
  // BullMQ workers need maxRetriesPerRequest: null on their blocking connection.
  const connection = { url: opts.redisUrl, maxRetriesPerRequest: null };
  const queue = new Queue<AnalysisJob, void, string>(queueName, {
    connection,
    prefix,
    defaultJobOptions: {
      attempts: maxAttempts,
      backoff: { type: 'exponential', delay: backoffMs },
      removeOnComplete: { count: opts.keepCompleted ?? 1000 },
      removeOnFail: { count: opts.keepFailed ?? 5000 },
    },
  });
  const onError = opts.onError ?? (() => undefined);
  queue.on('error', onError); // connection errors also surface through ping() and enqueue rejections
  const pinger = new Redis(opts.redisUrl, { lazyConnect: true, maxRetriesPerRequest: 1, connectTimeout: 2000 });
  pinger.on('error', () => undefined);
  const workers = new Set<Worker<AnalysisJob, void, string>>();

  async function enqueue(payload: AnalysisJob, enqueueOpts: { jobId?: string; delayMs?: number } = {}): Promise<string> {
    const jobId = enqueueOpts.jobId ?? randomUUID();
    if (jobId.includes(':') || jobId.length === 0) throw new RangeError(`job id must be non-empty and contain no ":": ${jobId}`);
    const existing = await queue.getJob(jobId);
    if (existing) {
      const state = await existing.getState();
      // same semantics as the embedded queue: a finished job with this id may run again, an unfinished one dedups
      if (state !== 'completed' && state !== 'failed') return jobId;
      await existing.remove();
    }
    await queue.add('analysis', payload, { jobId, delay: Math.max(0, enqueueOpts.delayMs ?? 0) });
    return jobId;
  }

  async function counts(): Promise<QueueCounts> {
    const c = await queue.getJobCounts('waiting', 'prioritized', 'active', 'delayed', 'failed', 'completed');
    // retries in backoff sit in the delayed set; count those with a failed attempt behind them (bounded scan)
    const delayed = await queue.getJobs(['delayed'], 0, 999);
    const retrying = delayed.filter((j) => j.attemptsMade > 0).length;
    return {
      waiting: (c.waiting ?? 0) + (c.prioritized ?? 0),
      active: c.active ?? 0,
      delayed: c.delayed ?? 0,
      failed: retrying,
      dead: c.failed ?? 0,
      completed: c.completed ?? 0,
    };
  }

  return {
    enqueue,
    work(handler, workOpts): QueueWorker {
      const worker = new Worker<AnalysisJob, void, string>(queueName, processorOf(handler), {
        connection,
        prefix,
        concurrency: workOpts.concurrency,
        lockDuration: lockDurationMs,
        stalledInterval: Math.max(1000, Math.floor(lockDurationMs / 2)),
        // A worker that dies mid-job stalls it; allow as many stalls as attempts so repeated crashes (a host
        // rebooting, a pod evicted twice) retry the job like the embedded queue's lease expiry does, instead of
        // failing it on the second stall.
        maxStalledCount: maxAttempts,
      });
      worker.on('error', onError);
      const onDead = workOpts.onDeadLetter;
      if (onDead) {
        // finishedOn is set only when the job moved to the failed set (attempts exhausted or UnrecoverableError),
        // not when it went back to delayed/waiting for a retry
        worker.on('failed', (job, err) => {
          if (!job || typeof job.finishedOn !== 'number') return;
          const parsed = AnalysisJob.safeParse(job.data);
          const dead = { id: job.id ?? '', payload: parsed.success ? parsed.data : null, attempts: job.attemptsMade, error: `${err.name}: ${err.message}` };
          onDead(dead).catch(onError);
        });
      }
      workers.add(worker);
      return {
        async close() {
          workers.delete(worker);
          await worker.close(); // waits for in-flight jobs, then releases the connection
        },
      };
    },
    counts,
    async ping() {
      try {
        if (pinger.status === 'wait') await pinger.connect();
        return (await pinger.ping()) === 'PONG';
      } catch {
        return false;
      }
    },
    async close() {
      await Promise.all([...workers].map((w) => w.close()));
      workers.clear();
      await queue.close();
      pinger.disconnect();
    },
  };
}

/** Removes every key of a queue (tests and tooling). */
export async function obliterateBullmqQueue(opts: Pick<BullmqQueueOptions, 'redisUrl' | 'queueName' | 'prefix'>): Promise<void> {
  const queue = new Queue(opts.queueName ?? 'analysis', { connection: { url: opts.redisUrl, maxRetriesPerRequest: null }, prefix: opts.prefix ?? 'plumbline' });
  try {
    await queue.obliterate({ force: true });
  } finally {
    await queue.close();
  }
}
