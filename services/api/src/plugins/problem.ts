import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { AppError, errors, problemType } from '../errors.ts';

interface BundleErrorLike {
  name: 'BundleError';
  code: string;
  message: string;
  file: string | null;
  line: number | null;
  column: number | null;
  issues: ReadonlyArray<{ line: number; column: number; message: string }>;
}

function isBundleError(e: unknown): e is BundleErrorLike {
  return e instanceof Error && e.name === 'BundleError' && typeof (e as { code?: unknown }).code === 'string';
}

/** Maps errors from the store and from fastify onto the API error list. */
function toAppError(err: unknown, req: FastifyRequest): AppError {
  if (err instanceof AppError) return err;
  if (isBundleError(err)) {
    const located: Record<string, unknown> = { bundle_code: err.code };
    if (err.file !== null) located.file = err.file;
    if (err.line !== null) located.line = err.line;
    if (err.column !== null) located.column = err.column;
    if (err.issues.length > 0) located.issues = err.issues.slice(0, 20);
    return errors.BUNDLE_INVALID(err.message).with(located);
  }
  const e = err as FastifyError & { expectedOffset?: number; maxBytes?: number; expected?: string; actual?: string };
  switch (e.code) {
    case 'RUN_CONFLICT':
      return new AppError('RUN_CONFLICT', 409, e.message);
    case 'NOT_FOUND':
      return new AppError('RUN_NOT_FOUND', 404, e.message);
    case 'INVALID_CURSOR':
      return errors.INVALID_CURSOR();
    case 'BLOB_TOO_LARGE':
      return errors.BODY_TOO_LARGE(e.maxBytes ?? 0);
    case 'BLOB_CHECKSUM_MISMATCH':
      return errors.CHECKSUM_MISMATCH(e.actual ?? '?', e.expected ?? '?');
    case 'BLOB_OFFSET_MISMATCH':
      return new AppError('UPLOAD_OFFSET_MISMATCH', 409, e.message, { expected_offset: e.expectedOffset });
    case 'FST_ERR_CTP_INVALID_MEDIA_TYPE':
      return errors.UNSUPPORTED_MEDIA_TYPE(String(req.headers['content-type'] ?? 'none'), 'application/json');
    case 'FST_ERR_CTP_BODY_TOO_LARGE':
    case 'FST_REQ_FILE_TOO_LARGE':
      return new AppError('BODY_TOO_LARGE', 413, e.message);
    default:
      break;
  }
  // Storage faults are the server's, not the client's, but they are transient and say what to do: retry later.
  if (typeof e.code === 'string' && /^SQLITE_(BUSY|LOCKED)/.test(e.code)) {
    return errors.NOT_READY('The database is busy; retry shortly').with({ retry_after_s: 1 });
  }
  if (e.code === 'ENOSPC' || e.code === 'EDQUOT') return errors.STORAGE_FULL(req.method === 'GET' ? 'this request' : 'the request body');
  if (typeof e.statusCode === 'number' && e.statusCode >= 400 && e.statusCode < 500) {
    // Malformed JSON, empty body and similar request errors from fastify itself.
    return errors.VALIDATION_FAILED('request', e.message);
  }
  return errors.INTERNAL(String(req.id));
}

export function sendProblem(reply: FastifyReply, req: FastifyRequest, appErr: AppError): FastifyReply {
  const factory = (errors as Record<string, { title: string } | undefined>)[appErr.code];
  const body = {
    type: problemType(appErr.code),
    title: factory?.title ?? appErr.code,
    status: appErr.statusCode,
    detail: appErr.message,
    instance: req.url.split('?')[0],
    code: appErr.code,
    request_id: String(req.id),
    ...appErr.extra,
  };
  if ((appErr.statusCode === 429 || appErr.statusCode === 503) && typeof appErr.extra.retry_after_s === 'number') reply.header('retry-after', appErr.extra.retry_after_s);
  if (appErr.statusCode === 401) reply.header('www-authenticate', 'Bearer realm="plumbline"');
  // The rest of a refused body is never read (oversized, or storage failed mid-way): close the connection after
  // answering rather than leave the client blocked on a connection nobody reads (RFC 9110, 15.5.14).
  if (appErr.statusCode === 413 || req.raw.complete === false) reply.header('connection', 'close');
  return reply.code(appErr.statusCode).type('application/problem+json').send(body);
}

/** One error handler for the whole app: every error leaves as RFC 9457 problem+json. */
export function registerProblemHandler(app: FastifyInstance): void {
  app.setErrorHandler((err, req, reply) => {
    const appErr = toAppError(err, req);
    if (appErr.statusCode >= 500) req.log.error({ err }, 'request failed');
    else req.log.info({ code: appErr.code, status: appErr.statusCode }, 'request refused');
    return sendProblem(reply, req, appErr);
  });
  app.setNotFoundHandler((req, reply) => sendProblem(reply, req, errors.ROUTE_NOT_FOUND(req.method, req.url.split('?')[0] ?? '')));
}
