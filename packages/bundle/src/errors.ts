/**
 * One error class for everything that can be wrong with a bundle. The API turns it into RFC 9457 problem+json:
 * `code` is stable, `file`/`line`/`column` locate the problem (1-based; null when not applicable).
 */
export type BundleErrorCode =
  | 'ARCHIVE_CORRUPT'
  | 'ARCHIVE_DUPLICATE'
  | 'ARCHIVE_ENTRY_TYPE'
  | 'ARCHIVE_LINK'
  | 'ARCHIVE_PATH_TRAVERSAL'
  | 'ARCHIVE_RATIO'
  | 'ARCHIVE_TOO_LARGE'
  | 'ARCHIVE_TOO_MANY_ENTRIES'
  | 'BUNDLE_NOT_FOUND'
  | 'BUNDLE_UNSUPPORTED'
  | 'CSV_BAD_HEADER'
  | 'CSV_EMPTY'
  | 'CSV_MISSING_COLUMN'
  | 'CSV_NO_DATA'
  | 'CSV_TOO_MANY_BAD_LINES'
  | 'CSV_TOO_MANY_NON_FINITE'
  | 'FILE_MISSING'
  | 'GZIP_CORRUPT'
  | 'LINE_TOO_LONG'
  | 'MANIFEST_INVALID'
  | 'MANIFEST_SYNTAX'
  | 'NMEA_NO_DATE'
  | 'NMEA_TOO_MANY_BAD_LINES'
  | 'NOT_UTF8';

/** One located problem: a line that was skipped, or a schema violation. */
export interface BundleIssue {
  line: number;
  column: number;
  message: string;
}

export interface BundleErrorInit {
  file?: string | null;
  line?: number | null;
  column?: number | null;
  /** Further located problems (first bad lines, every schema violation). */
  issues?: readonly BundleIssue[];
  /** JSON paths of schema violations, parallel to `issues` when the error is MANIFEST_INVALID. */
  paths?: readonly string[];
  cause?: unknown;
}

export class BundleError extends Error {
  override readonly name = 'BundleError';
  readonly code: BundleErrorCode;
  readonly file: string | null;
  readonly line: number | null;
  readonly column: number | null;
  readonly issues: readonly BundleIssue[];
  readonly paths: readonly string[];

  constructor(code: BundleErrorCode, message: string, init: BundleErrorInit = {}) {
    super(formatMessage(message, init), init.cause === undefined ? undefined : { cause: init.cause });
    this.code = code;
    this.file = init.file ?? null;
    this.line = init.line ?? null;
    this.column = init.column ?? null;
    this.issues = init.issues ?? [];
    this.paths = init.paths ?? [];
  }
}

function formatMessage(message: string, init: BundleErrorInit): string {
  if (init.file == null) return message;
  let where = init.file;
  if (init.line != null) where += `:${init.line}`;
  if (init.line != null && init.column != null) where += `:${init.column}`;
  return `${where}: ${message}`;
}

export function isBundleError(e: unknown): e is BundleError {
  return e instanceof BundleError;
}

/** An operating-system error (ENOSPC, EACCES, …): the server's problem, never reported as a bundle defect. */
export function isSystemError(e: unknown): boolean {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  return typeof code === 'string' && /^E[A-Z]+$/.test(code);
}
