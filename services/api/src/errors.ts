import { format } from 'node:util';

/**
 * One error list for the API. Every error the service raises on purpose is an `AppError` made by one of the
 * factories below; the error handler (plugins/problem.ts) turns it into RFC 9457 problem+json whose `type`
 * is stable per code.
 */
export class AppError extends Error {
  override readonly name = 'AppError';
  constructor(
    readonly code: string,
    readonly statusCode: number,
    message: string,
    /** Extra problem members (e.g. `file`, `line`, `column`, `expected_offset`). */
    readonly extra: Record<string, unknown> = {},
  ) {
    super(message);
  }
  /** A copy with more problem members. */
  with(extra: Record<string, unknown>): AppError {
    const e = new AppError(this.code, this.statusCode, this.message, { ...this.extra, ...extra });
    e.stack = this.stack;
    return e;
  }
}

export interface AppErrorFactory {
  (...args: Array<string | number>): AppError;
  readonly code: string;
  readonly statusCode: number;
  readonly title: string;
}

/** `createAppError('RUN_NOT_FOUND', 'No run %s', 404)`: a factory whose arguments fill the `%s` of the message. */
export function createAppError(code: string, messageFormat: string, statusCode: number, title?: string): AppErrorFactory {
  const make = (...args: Array<string | number>) => new AppError(code, statusCode, format(messageFormat, ...args));
  return Object.assign(make, { code, statusCode, title: title ?? humanise(code) });
}

function humanise(code: string): string {
  const s = code.toLowerCase().replace(/_/g, ' ');
  return s.charAt(0).toUpperCase() + s.slice(1);
}

export const errors = {
  UNAUTHENTICATED: createAppError('UNAUTHENTICATED', '%s', 401, 'Authentication required'),
  FORBIDDEN: createAppError('FORBIDDEN', '%s', 403),
  ROBOT_MISMATCH: createAppError('ROBOT_MISMATCH', 'This token belongs to robot %s and cannot act for robot %s', 403),
  ROUTE_NOT_FOUND: createAppError('ROUTE_NOT_FOUND', 'No route %s %s', 404),
  RUN_NOT_FOUND: createAppError('RUN_NOT_FOUND', 'No run %s', 404),
  ROBOT_NOT_FOUND: createAppError('ROBOT_NOT_FOUND', 'No robot %s', 404),
  UPLOAD_NOT_FOUND: createAppError('UPLOAD_NOT_FOUND', 'No upload session %s', 404),
  TOKEN_NOT_FOUND: createAppError('TOKEN_NOT_FOUND', 'No active token %s', 404),
  WEBHOOK_NOT_FOUND: createAppError('WEBHOOK_NOT_FOUND', 'No active webhook %s', 404),
  REPORT_NOT_READY: createAppError('REPORT_NOT_READY', 'Run %s has no report yet (status %s)', 409),
  TRAJECTORY_NOT_STORED: createAppError(
    'TRAJECTORY_NOT_STORED',
    'The current report of run %s was recorded without a repaired trajectory; re-analyse the run to produce one',
    409,
  ),
  VALIDATION_FAILED: createAppError('VALIDATION_FAILED', 'Invalid %s: %s', 400),
  INVALID_CURSOR: createAppError('INVALID_CURSOR', 'The cursor was not issued by this server or has expired', 400),
  UNSUPPORTED_MEDIA_TYPE: createAppError('UNSUPPORTED_MEDIA_TYPE', 'Content type %s is not accepted here; send %s', 415),
  BODY_TOO_LARGE: createAppError('BODY_TOO_LARGE', 'The body is larger than the limit of %s bytes', 413),
  BUNDLE_INVALID: createAppError('BUNDLE_INVALID', '%s', 422, 'Invalid run bundle'),
  RUN_CONFLICT: createAppError('RUN_CONFLICT', 'Robot %s already uploaded run %s with different content', 409),
  UPLOAD_OFFSET_MISMATCH: createAppError('UPLOAD_OFFSET_MISMATCH', 'Upload %s is at byte %s, not %s', 409),
  UPLOAD_CLOSED: createAppError('UPLOAD_CLOSED', 'Upload session %s is %s', 409),
  UPLOAD_INCOMPLETE: createAppError('UPLOAD_INCOMPLETE', 'Upload %s has %s of %s bytes', 409),
  UPLOAD_TOO_LARGE: createAppError('UPLOAD_TOO_LARGE', 'Upload %s would exceed its declared size of %s bytes', 413),
  CHECKSUM_MISMATCH: createAppError('CHECKSUM_MISMATCH', 'The SHA-256 of the received bytes is %s, not the declared %s', 422),
  RATE_LIMITED: createAppError('RATE_LIMITED', 'Too many %s; retry in %s s', 429),
  NOT_READY: createAppError('NOT_READY', '%s', 503, 'Service not ready'),
  STORAGE_FULL: createAppError('STORAGE_FULL', 'The server has no storage space left for %s; nothing was stored', 507, 'Insufficient storage'),
  POLICY_NOT_FOUND: createAppError('POLICY_NOT_FOUND', 'No policy %s', 404),
  POLICY_EXISTS: createAppError('POLICY_EXISTS', 'Policy %s version %s already exists; store changes under a new version', 409),
  INTERNAL: createAppError('INTERNAL', 'Internal error (request %s)', 500),
} as const;

export type ErrorCode = keyof typeof errors;

/** Stable problem `type` URI of a code: a relative reference into the HTML reference page. */
export function problemType(code: string): string {
  return `/reference#problem-${code.toLowerCase().replace(/_/g, '-')}`;
}
