import { open } from 'node:fs/promises';
import { pipeline, type Readable } from 'node:stream';
import { createGunzip } from 'node:zlib';
import type { FastifyRequest } from 'fastify';
import { z } from 'zod';
import { AuditEntry, Report, RunDetail, RunListPage, RunListQuery, RunSummary } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { ingestBlob, requestAnalysis, UPLOAD_NAME } from '../ingest.ts';
import type { InspectUpload } from '../context.ts';
import { createUploadInspector, inspectBundle, type UploadInspector } from '@plumbline/bundle';
import { actorOf } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { ALL_ROLES, assertLengthWithin, IdParams, READERS, uploadRateLimit, visibleRun } from './common.ts';

export const BUNDLE_CONTENT_TYPES = ['application/gzip', 'application/x-gzip', 'application/x-tar', 'application/zip', 'application/octet-stream'];
const Ingested = z.object({ run: RunSummary, created: z.boolean() }).strict();
const Reanalysed = z.object({ run: RunSummary }).strict();
const ReanalyseOne = z.object({ policy: z.string().max(128).optional() }).strict().default({});
/** Bulk re-analysis: the filter fields of RunListQuery plus an optional policy name. */
const ReanalyseMany = RunListQuery.omit({ sort: true, limit: true, cursor: true })
  .extend({ policy: z.string().max(128).optional(), max_runs: z.number().int().min(1).max(10_000).default(1000) })
  .strict();
const TrajectoryQuery = z.object({ variant: z.enum(['repaired', 'original']).default('original') }).strict();

/** The request body as a stream: the `bundle` part of a multipart form, or the raw body of an archive type. */
async function bundleSource(req: FastifyRequest): Promise<Readable> {
  const ct = String(req.headers['content-type'] ?? '').split(';')[0]?.trim().toLowerCase() ?? '';
  if (ct === 'multipart/form-data') {
    const part = await req.file();
    if (!part || part.fieldname !== 'bundle') throw errors.VALIDATION_FAILED('body', 'the multipart form needs a file field named "bundle"');
    return part.file;
  }
  if (BUNDLE_CONTENT_TYPES.includes(ct)) return req.body as Readable;
  throw errors.UNSUPPORTED_MEDIA_TYPE(ct || '(none)', `${BUNDLE_CONTENT_TYPES.join(', ')} or multipart/form-data`);
}

/** True when an Accept-Encoding header admits gzip (RFC 9110 §12.5.3: `gzip` or `*` with a non-zero weight). */
export function acceptsGzip(header: string | undefined): boolean {
  for (const part of (header ?? '').toLowerCase().split(',')) {
    const [coding, ...params] = part.trim().split(';');
    if (coding !== 'gzip' && coding !== 'x-gzip' && coding !== '*') continue;
    const q = params.map((p) => /^\s*q=([0-9.]+)\s*$/.exec(p)?.[1]).find((v) => v !== undefined);
    if (q === undefined || Number(q) > 0) return true;
  }
  return false;
}

async function sniffArchive(path: string): Promise<{ type: string; ext: string }> {
  const fh = await open(path, 'r');
  try {
    const buf = Buffer.alloc(4);
    await fh.read(buf, 0, 4, 0);
    if (buf[0] === 0x1f && buf[1] === 0x8b) return { type: 'application/gzip', ext: 'tar.gz' };
    if (buf[0] === 0x50 && buf[1] === 0x4b) return { type: 'application/zip', ext: 'zip' };
    return { type: 'application/x-tar', ext: 'tar' };
  } finally {
    await fh.close();
  }
}

/**
 * The request bytes on their way to storage, each chunk also given to the streaming upload check (which holds the
 * stream back only when its own buffer is full). When the body ends the check is told its size at once, so it
 * finishes while the stored file is being fsynced; `checked()` is its result (undefined while the body had not ended).
 */
function teed(source: Readable, inspector: UploadInspector): { chunks: AsyncGenerator<Uint8Array>; checked: () => ReturnType<UploadInspector['end']> | undefined } {
  let ended: ReturnType<UploadInspector['end']> | undefined;
  async function* chunks(): AsyncGenerator<Uint8Array> {
    let sizeBytes = 0;
    for await (const chunk of source) {
      sizeBytes += (chunk as Uint8Array).byteLength;
      await inspector.write(chunk as Uint8Array);
      yield chunk as Uint8Array;
    }
    ended = inspector.end(sizeBytes);
    // awaited by the ingest; marked handled for a storage failure that ends the request before that
    ended.catch(() => undefined);
  }
  return { chunks: chunks(), checked: () => ended };
}

export function registerRunRoutes(ctx: ApiContext): void {
  const { store, blobs, queue } = ctx.deps;
  // The real check has a streaming form; a test double of inspectBundle is used after storing, as given.
  const inspectUpload: InspectUpload | undefined =
    ctx.deps.inspectUpload ?? (ctx.deps.inspectBundle === inspectBundle ? (o) => createUploadInspector(o) : undefined);
  defineRoute(
    ctx,
    {
      method: 'POST',
      url: '/api/v1/runs',
      operationId: 'uploadRun',
      summary: 'Upload a run bundle in one request (streamed to storage; idempotent on robot, run id and content)',
      tag: 'runs',
      auth: ['robot', 'admin'],
      rawBody: { contentTypes: [...BUNDLE_CONTENT_TYPES, 'multipart/form-data'], description: 'The bundle archive (.tar.gz, .tar or .zip), or a form with a file field "bundle"' },
      responses: { 201: Ingested, 200: Ingested },
      preHandler: uploadRateLimit(ctx),
    },
    async (req, { principal }, reply) => {
      assertLengthWithin(req, ctx.config.maxUploadBytes);
      const source = await bundleSource(req);
      const declared = Number(req.headers['content-length']);
      const inspector = inspectUpload?.({ name: UPLOAD_NAME, maxCompressedBytes: Number.isFinite(declared) && declared > 0 ? declared : ctx.config.maxUploadBytes });
      const tee = inspector ? teed(source, inspector) : null;
      let blob;
      try {
        blob = await blobs.writeStream(tee?.chunks ?? source, { maxBytes: ctx.config.maxUploadBytes });
      } catch (err) {
        await inspector?.abort();
        throw err;
      }
      ctx.metrics.uploadBytes.inc({ kind: 'whole' }, blob.sizeBytes);
      const sizeBytes = blob.sizeBytes;
      const checked = inspector ? () => tee?.checked() ?? inspector.end(sizeBytes) : undefined;
      const result = await ingestBlob(ctx.deps, principal, blob, undefined, checked);
      req.log.info({ runId: result.run.id, created: result.created, sizeBytes: blob.sizeBytes }, 'bundle stored');
      reply.code(result.created ? 201 : 200);
      return result;
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/runs', operationId: 'listRuns', summary: 'List runs (filters, sort, cursor pagination)', tag: 'runs', auth: ALL_ROLES, query: RunListQuery, responses: { 200: RunListPage } },
    // synchronous: a page from the store's cache is sent in the same turn
    (_req, { query, principal }) => store.runs.list(principal.role === 'robot' ? { ...query, robot_id: principal.robotId ?? '' } : query),
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/runs/:id', operationId: 'getRun', summary: 'One run: summary, current report and reviews', tag: 'runs', auth: ALL_ROLES, params: IdParams, responses: { 200: RunDetail } },
    async (_req, { params, principal }) => {
      const summary = visibleRun(ctx, principal, params.id);
      return { summary, report: store.reports.current(params.id), reviews: store.reviews.list(params.id) };
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/runs/:id/report', operationId: 'getReport', summary: 'The current analysis report of a run', tag: 'runs', auth: ALL_ROLES, params: IdParams, responses: { 200: Report } },
    async (_req, { params, principal }) => {
      const run = visibleRun(ctx, principal, params.id);
      const report = store.reports.current(run.id);
      if (!report) throw errors.REPORT_NOT_READY(run.id, run.status);
      return report;
    },
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/api/v1/runs/:id/trajectory.csv',
      operationId: 'getTrajectoryCsv',
      summary:
        'The odometry trajectory as CSV, as recorded or with the report corrections applied (repaired: produced at analysis time, sent gzip-encoded when the client accepts it)',
      tag: 'runs',
      auth: ALL_ROLES,
      params: IdParams,
      query: TrajectoryQuery,
      responses: { 200: { contentTypes: ['text/csv'], description: 'CSV with a header line' } },
    },
    async (req, { params, query, principal }, reply) => {
      const run = visibleRun(ctx, principal, params.id);
      const report = store.reports.current(run.id);
      if (!report) throw errors.REPORT_NOT_READY(run.id, run.status);
      reply.header('content-disposition', `attachment; filename="${run.robot_id}_${run.run_id}_${query.variant}.csv"`);
      if (query.variant === 'repaired') {
        // Stored gzipped by the worker at analysis time; never recomputed here.
        const sha = store.reports.repairedCsvOf(run.id);
        if (!sha) throw errors.TRAJECTORY_NOT_STORED(run.id);
        reply.header('vary', 'accept-encoding');
        reply.type('text/csv; charset=utf-8');
        if (acceptsGzip(req.headers['accept-encoding'])) return reply.header('content-encoding', 'gzip').send(blobs.open(sha));
        return reply.send(pipeline(blobs.open(sha), createGunzip(), () => undefined));
      }
      if (!ctx.deps.trajectoryCsv) throw errors.NOT_READY('trajectory export is not available in this deployment');
      const csv = await ctx.deps.trajectoryCsv(blobs.pathOf(run.sha256), 'original');
      return reply.type('text/csv; charset=utf-8').send(csv);
    },
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/api/v1/runs/:id/bundle',
      operationId: 'getBundle',
      summary: 'The bundle archive as uploaded',
      tag: 'runs',
      auth: ALL_ROLES,
      params: IdParams,
      responses: { 200: { contentTypes: ['application/gzip', 'application/zip', 'application/x-tar'], description: 'The archive' } },
    },
    async (_req, { params, principal }, reply) => {
      const run = visibleRun(ctx, principal, params.id);
      const { type, ext } = await sniffArchive(blobs.pathOf(run.sha256));
      reply.header('content-disposition', `attachment; filename="${run.robot_id}_${run.run_id}.${ext}"`);
      reply.header('content-length', run.size_bytes);
      return reply.type(type).send(blobs.open(run.sha256));
    },
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/runs/:id/reanalyse', operationId: 'reanalyseRun', summary: 'Analyse a run again (new generation; older results are refused)', tag: 'runs', auth: ['admin'], params: IdParams, body: ReanalyseOne, responses: { 202: Reanalysed } },
    async (_req, { params, body, principal }, reply) => {
      const run = visibleRun(ctx, principal, params.id);
      await requestAnalysis(store, queue, run.id, body.policy);
      store.audit.append(actorOf(principal), 'run.reanalyse-requested', run.id, { policy: body.policy ?? null });
      reply.code(202);
      return { run: store.runs.get(run.id) ?? run };
    },
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/reanalyse', operationId: 'reanalyseRuns', summary: 'Analyse every run matching a filter again', tag: 'runs', auth: ['admin'], body: ReanalyseMany, responses: { 202: z.object({ queued: z.number().int() }).strict() } },
    async (_req, { body, principal }, reply) => {
      const { policy, max_runs, ...filter } = body;
      const ids = store.runs.idsMatching(filter, max_runs);
      let queued = 0;
      for (const id of ids) if (await requestAnalysis(store, queue, id, policy)) queued++;
      store.audit.append(actorOf(principal), 'runs.reanalyse-requested', 'runs', { filter, policy: policy ?? null, queued });
      reply.code(202);
      return { queued };
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/runs/:id/audit', operationId: 'getRunAudit', summary: 'Audit trail of a run, newest first', tag: 'runs', auth: READERS, params: IdParams, responses: { 200: z.array(AuditEntry) } },
    async (_req, { params, principal }) => store.audit.list({ subject: visibleRun(ctx, principal, params.id).id, limit: 500 }),
  );
}
