import type { Logger } from 'pino';
import { AnalysisJob, type Policy, type Report } from '@plumbline/contracts';
import { UnrecoverableJobError, type JobHandler } from '@plumbline/queue';
import { toAnalysisOutput, type AnalysisOutput } from '../analysis-output.ts';
import type { AnalysisLedger } from '../ledger/ledger.ts';

/**
 * The analysis entry point, injected so the processor can be tested and wired without knowing the package. It may
 * answer with the report alone or with the report and the gzipped repaired trajectory CSV.
 */
export type Analyze = (bundlePath: string, policy: Policy) => Promise<Report | AnalysisOutput>;

export interface AnalyseRunDeps {
  /** The system of record: the local store, or the API over HTTP (remote workers). */
  ledger: AnalysisLedger;
  analyze: Analyze;
  logger: Logger;
  /** Attempts the queue makes before giving up; on the last one a transient failure marks the run `failed`. */
  maxAttempts: number;
  onJobFinished?: (durationS: number, outcome: 'done' | 'rejected' | 'failed' | 'retry' | 'stale') => void;
}

function isBundleError(e: unknown): e is Error & { code: string; file: string | null; line: number | null; column: number | null } {
  return e instanceof Error && e.name === 'BundleError';
}

/**
 * Analyses one run: `queued` -> `analysing` -> `done` with the report recorded exactly once under the job key.
 * - A stale job (the run was re-queued since, or already finished) is acknowledged without work.
 * - A bundle problem (BundleError) rejects the run with the reason and is not retried.
 * - Anything else is thrown for the queue to retry with backoff; the last attempt marks the run `failed`.
 * Recording queues the `run.analysed` webhook event (the ledger does, in the process that owns the store).
 */
export function createAnalyseRunProcessor(deps: AnalyseRunDeps): JobHandler {
  const { ledger, logger } = deps;
  return async (job) => {
    const started = performance.now();
    const finish = (outcome: Parameters<NonNullable<AnalyseRunDeps['onJobFinished']>>[1]) =>
      deps.onJobFinished?.((performance.now() - started) / 1000, outcome);
    const parsed = AnalysisJob.safeParse(job.payload);
    if (!parsed.success || !parsed.data.attempt_tag) throw new UnrecoverableJobError(`invalid analysis job payload (job ${job.id})`);
    const { run: runId, attempt_tag: jobKey } = parsed.data;
    const log = logger.child({ runId, jobKey, attempt: job.attempt });
    const start = await ledger.start(runId, jobKey, parsed.data.policy ?? null);
    if (!start.started) {
      if (start.reason === 'not-found') throw new UnrecoverableJobError(`run ${runId} does not exist`);
      if (start.reason === 'unknown-policy') {
        finish('failed');
        throw new UnrecoverableJobError(start.message);
      }
      log.info('job is stale or the run is finished; skipped');
      finish('stale');
      return;
    }
    let output: AnalysisOutput;
    try {
      const bundle = await ledger.bundle(runId, start.sha256);
      try {
        output = toAnalysisOutput(await deps.analyze(bundle.path, start.policy));
      } finally {
        await bundle.release();
      }
    } catch (err) {
      if (isBundleError(err)) {
        await ledger.reject(runId, jobKey, { reason: err.message, code: err.code ?? null, file: err.file, line: err.line, column: err.column });
        log.info({ code: err.code, reason: err.message }, 'bundle rejected by the analysis');
        finish('rejected');
        throw new UnrecoverableJobError(err.message, { cause: err });
      }
      if (job.attempt >= deps.maxAttempts) {
        await ledger.fail(runId, jobKey, `analysis failed after ${job.attempt} attempts: ${(err as Error).message}`);
        finish('failed');
      } else {
        finish('retry');
      }
      log.warn({ err }, 'analysis attempt failed');
      throw err;
    }
    const { report } = output;
    const outcome = await ledger.record(runId, jobKey, report, output.repairedCsvGz);
    if (!outcome.recorded) {
      log.info({ reason: outcome.reason }, 'result not recorded');
      finish('stale');
      return;
    }
    log.info({ score: report.score, verdict: report.verdict }, 'analysis recorded');
    finish('done');
  };
}
