import { constants as zlibConstants, gunzipSync } from 'node:zlib';
import { z } from 'zod';
import { Policy, Report, RunSummary } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { createApiPolicyResolver, recordPostedResult, recordRejection } from '../analysis-results.ts';
import { errors } from '../errors.ts';
import { defineRoute } from '../plugins/route.ts';
import { IdParams } from './common.ts';

const JobKey = z.string().min(1).max(160);
const StartBody = z.object({ job_key: JobKey, policy: z.string().max(128).nullable().default(null) }).strict();
const StartAnswer = z
  .object({
    started: z.boolean(),
    reason: z.enum(['stale', 'unknown-policy']).optional(),
    message: z.string().optional(),
    sha256: z.string().length(64).optional(),
    policy: Policy.optional(),
  })
  .strict();
const Rejected = z
  .object({ reason: z.string().min(1).max(2000), code: z.string().max(64).nullable(), file: z.string().max(512).nullable(), line: z.number().int().nullable(), column: z.number().int().nullable() })
  .strict();
/** A remote worker's result: the report (with the gzipped repaired trajectory CSV, base64), a rejection, or a failure. */
const ResultBody = z.union([
  z.object({ job_key: JobKey, report: Report, repaired_csv_gz_base64: z.string().max(96 * 1024 * 1024).optional() }).strict(),
  z.object({ job_key: JobKey, rejected: Rejected }).strict(),
  z.object({ job_key: JobKey, failed: z.object({ reason: z.string().min(1).max(2000) }).strict() }).strict(),
]);
const ResultAnswer = z.object({ recorded: z.boolean(), reason: z.string().optional(), run: RunSummary }).strict();

/** Largest result body: a report plus a base64 gzipped trajectory (about 1.8 million poses at ~27 bytes each). */
const RESULT_BODY_LIMIT = 128 * 1024 * 1024;

function decodeCsv(base64: string | undefined): Buffer | null {
  if (base64 === undefined) return null;
  const gz = Buffer.from(base64, 'base64');
  if (gz[0] !== 0x1f || gz[1] !== 0x8b) throw errors.VALIDATION_FAILED('body', 'repaired_csv_gz_base64 is not gzip data');
  // Only the head is decoded (the first 4 KiB of the stream, sync-flushed) to check the odometry header line.
  let head = '';
  try {
    head = gunzipSync(gz.subarray(0, 4096), { finishFlush: zlibConstants.Z_SYNC_FLUSH }).subarray(0, 19).toString('utf8');
  } catch {
    head = '';
  }
  if (head !== 't,x,y,z,qw,qx,qy,qz') throw errors.VALIDATION_FAILED('body', 'repaired_csv_gz_base64 does not hold a trajectory CSV (header t,x,y,z,qw,qx,qy,qz)');
  return gz;
}

/**
 * The routes remote workers use instead of the database (admin tokens): start a job under its key, then post the
 * result. Both follow the store's job-key rules, so a stale or duplicate post changes nothing and says why.
 */
export function registerAnalysisResultRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  const policyFor = createApiPolicyResolver(store, ctx.config.policyFile);
  const resultDeps = { store, blobs: ctx.deps.blobs, clock: ctx.deps.clock, logger: ctx.deps.logger };
  defineRoute(
    ctx,
    {
      method: 'POST',
      url: '/api/v1/runs/:id/analysis/start',
      operationId: 'startAnalysis',
      summary: 'A worker starts an analysis job: the run turns analysing under the job key; answers the bundle hash and the policy',
      tag: 'workers',
      auth: ['admin'],
      params: IdParams,
      body: StartBody,
      responses: { 200: StartAnswer },
    },
    async (_req, { params, body }) => {
      const run = store.runs.get(params.id);
      if (!run) throw errors.RUN_NOT_FOUND(params.id);
      if (!store.runs.markAnalysing(run.id, body.job_key)) return { started: false, reason: 'stale' as const };
      const policy = policyFor(body.policy);
      if (!policy) {
        const message = `unknown policy ${body.policy}`;
        store.runs.markFailed(run.id, body.job_key, message);
        return { started: false, reason: 'unknown-policy' as const, message };
      }
      return { started: true, sha256: run.sha256, policy };
    },
  );
  defineRoute(
    ctx,
    {
      method: 'POST',
      url: '/api/v1/runs/:id/analysis',
      operationId: 'postAnalysisResult',
      summary: 'A worker posts the result of an analysis job (report, rejection or failure); recorded once per job key',
      tag: 'workers',
      auth: ['admin'],
      params: IdParams,
      body: ResultBody,
      bodyLimit: RESULT_BODY_LIMIT,
      responses: { 200: ResultAnswer },
    },
    async (req, { params, body }) => {
      const run = store.runs.get(params.id);
      if (!run) throw errors.RUN_NOT_FOUND(params.id);
      let recorded: boolean;
      let reason: string | undefined;
      if ('report' in body) {
        const outcome = await recordPostedResult(resultDeps, run.id, body.job_key, body.report, decodeCsv(body.repaired_csv_gz_base64));
        recorded = outcome.recorded;
        if (!outcome.recorded) reason = outcome.reason;
      } else if ('rejected' in body) {
        recorded = recordRejection(resultDeps, run.id, body.job_key, body.rejected);
        if (!recorded) reason = 'stale-job';
      } else {
        recorded = store.runs.markFailed(run.id, body.job_key, body.failed.reason);
        if (!recorded) reason = 'stale-job';
      }
      req.log.info({ runId: run.id, jobKey: body.job_key, recorded, reason }, 'worker result posted');
      return { recorded, ...(reason ? { reason } : {}), run: store.runs.get(run.id) ?? run };
    },
  );
}
