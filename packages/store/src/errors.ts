/** Errors the store throws for conditions a caller is expected to handle. Each carries a stable `code`. */

export class StoreError extends Error {
  readonly code: string;
  constructor(code: string, message: string) {
    super(message);
    this.name = new.target.name;
    this.code = code;
  }
}

/** The database was written by newer code, or an applied migration file was changed. */
export class MigrationError extends StoreError {
  constructor(message: string) {
    super('MIGRATION_MISMATCH', message);
  }
}

/** Same (robot_id, run_id) already stored with different content. */
export class RunConflictError extends StoreError {
  readonly existingSha256: string;
  constructor(robotId: string, runId: string, existingSha256: string) {
    super('RUN_CONFLICT', `run ${robotId}/${runId} already exists with different content (sha256 ${existingSha256})`);
    this.existingSha256 = existingSha256;
  }
}

export class NotFoundError extends StoreError {
  constructor(what: string, id: string) {
    super('NOT_FOUND', `${what} ${id} not found`);
  }
}

/** A list cursor that this store did not issue or that belongs to another sort. */
export class InvalidCursorError extends StoreError {
  constructor(reason: string) {
    super('INVALID_CURSOR', `invalid cursor: ${reason}`);
  }
}

export class BlobTooLargeError extends StoreError {
  readonly maxBytes: number;
  constructor(maxBytes: number) {
    super('BLOB_TOO_LARGE', `content exceeds the limit of ${maxBytes} bytes`);
    this.maxBytes = maxBytes;
  }
}

export class BlobChecksumError extends StoreError {
  readonly expected: string;
  readonly actual: string;
  constructor(expected: string, actual: string) {
    super('BLOB_CHECKSUM_MISMATCH', `content sha256 ${actual} does not match the expected ${expected}`);
    this.expected = expected;
    this.actual = actual;
  }
}

/** Write at an offset other than the temp file's current size (resumable upload out of step). */
export class BlobOffsetError extends StoreError {
  readonly expectedOffset: number;
  constructor(expectedOffset: number, got: number) {
    super('BLOB_OFFSET_MISMATCH', `write at offset ${got}, but the file holds ${expectedOffset} bytes`);
    this.expectedOffset = expectedOffset;
  }
}
