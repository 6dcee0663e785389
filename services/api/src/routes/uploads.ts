import type { Readable } from 'node:stream';
import { z } from 'zod';
import { RunSummary, UploadSession, UploadSessionCreate } from '@plumbline/contracts';
import type { UploadSessionRecord } from '@plumbline/store';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { ingestBlob, isRefusal } from '../ingest.ts';
import type { Principal } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { assertLengthWithin, IdParams, uploadRateLimit } from './common.ts';

const UPLOADERS = ['robot', 'admin'] as const;
const SESSION_TTL_MS = 24 * 3600 * 1000;
const OffsetQuery = z.object({ offset: z.coerce.number().int().min(0) }).strict();
const Finished = z.object({ run: RunSummary, created: z.boolean() }).strict();

function publicSession(s: UploadSessionRecord): UploadSession {
  const { id, robot_id, run_id, size_bytes, sha256, received_bytes, state, expires_at, run } = s;
  return { id, robot_id, run_id, size_bytes, sha256, received_bytes, state, expires_at, run };
}

/**
 * Resumable uploads: open a session with the size and SHA-256, PUT the bytes in order at the offset the server
 * holds, ask for that offset after a dropped connection, then finish. The server checks size and digest before
 * the bundle becomes a run, exactly as for a one-shot upload.
 */
export function registerUploadRoutes(ctx: ApiContext): void {
  const { store, blobs } = ctx.deps;

  function ownSession(p: Principal, id: string): UploadSessionRecord {
    const s = store.uploads.get(id);
    if (!s || (p.role === 'robot' && s.robot_id !== p.robotId)) throw errors.UPLOAD_NOT_FOUND(id);
    return s;
  }

  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/uploads', operationId: 'createUpload', summary: 'Open a resumable upload session', tag: 'uploads', auth: UPLOADERS, body: UploadSessionCreate, responses: { 201: UploadSession }, preHandler: uploadRateLimit(ctx) },
    async (_req, { body, principal }, reply) => {
      if (principal.role === 'robot' && body.robot_id !== principal.robotId) throw errors.ROBOT_MISMATCH(principal.robotId ?? '(none)', body.robot_id);
      if (body.size_bytes > ctx.config.maxUploadBytes) throw errors.BODY_TOO_LARGE(ctx.config.maxUploadBytes);
      const temp_path = await blobs.createTemp('upload');
      const s = store.uploads.create({ ...body, temp_path, ttl_ms: SESSION_TTL_MS }, ctx.deps.clock.now());
      reply.code(201);
      return publicSession(s);
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/uploads/:id', operationId: 'getUpload', summary: 'An upload session, with the number of bytes the server holds', tag: 'uploads', auth: UPLOADERS, params: IdParams, responses: { 200: UploadSession } },
    async (_req, { params, principal }) => publicSession(ownSession(principal, params.id)),
  );
  defineRoute(
    ctx,
    {
      method: 'PUT',
      url: '/api/v1/uploads/:id',
      operationId: 'putUploadChunk',
      summary: 'Append bytes at `offset` (must equal received_bytes; otherwise 409 with expected_offset)',
      tag: 'uploads',
      auth: UPLOADERS,
      params: IdParams,
      query: OffsetQuery,
      rawBody: { contentTypes: ['application/octet-stream'], description: 'The next bytes of the archive' },
      responses: { 200: UploadSession },
    },
    async (req, { params, query, principal }) => {
      const s = ownSession(principal, params.id);
      if (s.state !== 'open') throw errors.UPLOAD_CLOSED(s.id, s.state);
      if (query.offset !== s.received_bytes) throw errors.UPLOAD_OFFSET_MISMATCH(s.id, s.received_bytes, query.offset).with({ expected_offset: s.received_bytes });
      const ct = String(req.headers['content-type'] ?? '').split(';')[0]?.trim();
      if (ct !== 'application/octet-stream') throw errors.UNSUPPORTED_MEDIA_TYPE(ct || '(none)', 'application/octet-stream');
      assertLengthWithin(req, s.size_bytes - s.received_bytes);
      let size: number;
      try {
        size = await blobs.appendChunk(s.temp_path, query.offset, req.body as Readable, { maxBytes: s.size_bytes });
      } catch (e) {
        if ((e as { code?: string }).code === 'BLOB_TOO_LARGE') throw errors.UPLOAD_TOO_LARGE(s.id, s.size_bytes);
        throw e;
      }
      if (!store.uploads.advance(s.id, query.offset, size, ctx.deps.clock.now())) {
        const now = store.uploads.get(s.id);
        throw errors.UPLOAD_OFFSET_MISMATCH(s.id, now?.received_bytes ?? -1, query.offset).with({ expected_offset: now?.received_bytes ?? null });
      }
      ctx.metrics.uploadBytes.inc({ kind: 'chunk' }, size - query.offset);
      return publicSession(ownSession(principal, s.id));
    },
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/uploads/:id/finish', operationId: 'finishUpload', summary: 'Check size and SHA-256, then ingest the bundle as a run', tag: 'uploads', auth: UPLOADERS, params: IdParams, responses: { 201: Finished, 200: Finished } },
    async (req, { params, principal }, reply) => {
      const s = ownSession(principal, params.id);
      if (s.state === 'complete' && s.run) {
        const run = store.runs.get(s.run);
        if (run) return { run, created: false };
      }
      if (s.state !== 'open') throw errors.UPLOAD_CLOSED(s.id, s.state);
      if (s.received_bytes !== s.size_bytes) throw errors.UPLOAD_INCOMPLETE(s.id, s.received_bytes, s.size_bytes).with({ expected_offset: s.received_bytes });
      // A finish retried after a failure past this point finds the bytes already at their content address.
      const blob = (await blobs.has(s.sha256))
        ? { sha256: s.sha256, sizeBytes: s.size_bytes, path: blobs.pathOf(s.sha256) }
        : await blobs.promote(s.temp_path, s.sha256).catch((e: unknown) => {
            // A digest mismatch cannot be repaired by sending more bytes: the session ends.
            if ((e as { code?: string }).code === 'BLOB_CHECKSUM_MISMATCH') {
              store.uploads.abort(s.id);
              // the bytes of an aborted session can never be finished: drop them now rather than at the next sweep
              return blobs.removeTemp(s.temp_path).then(() => Promise.reject(e));
            }
            throw e;
          });
      let result;
      try {
        result = await ingestBlob(ctx.deps, principal, blob, { robot_id: s.robot_id, run_id: s.run_id });
      } catch (e) {
        // Refusals end the session; other failures leave it open so the client can call finish again.
        if (isRefusal(e)) store.uploads.abort(s.id);
        throw e;
      }
      await blobs.removeTemp(s.temp_path);
      store.uploads.complete(s.id, result.run.id);
      req.log.info({ runId: result.run.id, created: result.created, uploadId: s.id }, 'upload finished');
      reply.code(result.created ? 201 : 200);
      return result;
    },
  );
  defineRoute(
    ctx,
    { method: 'DELETE', url: '/api/v1/uploads/:id', operationId: 'abortUpload', summary: 'Abort an upload session and drop its bytes', tag: 'uploads', auth: UPLOADERS, params: IdParams, responses: { 204: z.null() } },
    async (_req, { params, principal }, reply) => {
      const s = ownSession(principal, params.id);
      if (s.state !== 'open') throw errors.UPLOAD_CLOSED(s.id, s.state);
      store.uploads.abort(s.id);
      await blobs.removeTemp(s.temp_path);
      return reply.code(204).send();
    },
  );
}
