import type { Logger } from 'pino';
import { AnalysisJob, type Policy, type Report } from '@plumbline/contracts';
import type { BlobStore, Store } from '@plumbline/store';
import { UnrecoverableJobError, type JobHandler } from '@plumbline/queue';

/** The analysis entry point, injected so the processor can be tested and wired without knowing the package. */
export type Analyze = (bundlePath: string, policy: Policy) => Promise<Report>;

export interface AnalyseRunDeps {
  store: Store;
  blobs: BlobStore;
  analyze: Analyze;
  /** The policy for a job: by name when the job names one, else the configured default; null = unknown name. */
  policyFor: (name: string | null) => Policy | null;
  logger: Logger;
  clock: { now(): Date };
  /** Attempts the queue makes before giving up; on the last one a transient failure marks the run `failed`. */
  maxAttempts: number;
  onJobFinished?: (durationS: number, outcome: 'done' | 'rejected' | 'failed' | 'retry' | 'stale') => void;
  /** Follow-up after a report is recorded (fleet maintenance findings, merge-ready webhook). */
  afterRecorded?: (runId: string, now: Date) => void;
}

function isBundleError(e: unknown): e is Error & { code: string; file: string | null; line: number | null; column: number | null } {
  return e instanceof Error && e.name === 'BundleError';
}

/**
 * Analyses one run: `queued` -> `analysing` -> `done` with the report recorded exactly once under the job key.
 * - A stale job (the run was re-queued since, or already finished) is acknowledged without work.
 * - A bundle problem (BundleError) rejects the run with the reason and is not retried.
 * - Anything else is thrown for the queue to retry with backoff; the last attempt marks the run `failed`.
 * After recording, a `run.analysed` webhook event is queued for delivery.
 */
export function createAnalyseRunProcessor(deps: AnalyseRunDeps): JobHandler {
  const { store, logger } = deps;
  return async (job) => {
    const started = performance.now();
    const finish = (outcome: Parameters<NonNullable<AnalyseRunDeps['onJobFinished']>>[1]) =>
      deps.onJobFinished?.((performance.now() - started) / 1000, outcome);
    const parsed = AnalysisJob.safeParse(job.payload);
    if (!parsed.success || !parsed.data.attempt_tag) throw new UnrecoverableJobError(`invalid analysis job payload (job ${job.id})`);
    const { run: runId, attempt_tag: jobKey } = parsed.data;
    const log = logger.child({ runId, jobKey, attempt: job.attempt });
    const run = store.runs.get(runId);
    if (!run) throw new UnrecoverableJobError(`run ${runId} does not exist`);
    if (!store.runs.markAnalysing(runId, jobKey)) {
      log.info({ status: run.status }, 'job is stale or the run is finished; skipped');
      finish('stale');
      return;
    }
    const policy = deps.policyFor(parsed.data.policy ?? null);
    if (!policy) {
      store.runs.markFailed(runId, jobKey, `unknown policy ${parsed.data.policy}`);
      finish('failed');
      throw new UnrecoverableJobError(`unknown policy ${parsed.data.policy}`);
    }
    let report: Report;
    try {
      report = await deps.analyze(deps.blobs.pathOf(run.sha256), policy);
    } catch (err) {
      if (isBundleError(err)) {
        store.runs.setStatus(runId, 'rejected', { reason: err.message, from: ['analysing'] });
        store.audit.append('worker', 'run.rejected', runId, { code: err.code, file: err.file, line: err.line, column: err.column, reason: err.message });
        const now = deps.clock.now();
        store.webhooks.enqueueEvent('run.analysed', { event: 'run.analysed', at: now.toISOString(), run: store.runs.get(runId), report: null }, now);
        log.info({ code: err.code, reason: err.message }, 'bundle rejected by the analysis');
        finish('rejected');
        throw new UnrecoverableJobError(err.message, { cause: err });
      }
      if (job.attempt >= deps.maxAttempts) {
        store.runs.markFailed(runId, jobKey, `analysis failed after ${job.attempt} attempts: ${(err as Error).message}`);
        finish('failed');
      } else {
        finish('retry');
      }
      log.warn({ err }, 'analysis attempt failed');
      throw err;
    }
    const outcome = store.reports.recordAnalysis(runId, report, jobKey);
    if (!outcome.recorded) {
      log.info({ reason: outcome.reason }, 'result not recorded');
      finish('stale');
      return;
    }
    const now = deps.clock.now();
    const summary = store.runs.get(runId);
    store.webhooks.enqueueEvent(
      'run.analysed',
      { event: 'run.analysed', at: now.toISOString(), run: summary, report: { score: report.score, verdict: report.verdict, flags: report.flags.length } },
      now,
    );
    deps.afterRecorded?.(runId, now);
    log.info({ score: report.score, verdict: report.verdict }, 'analysis recorded');
    finish('done');
  };
}
