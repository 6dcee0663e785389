/**
 * Thrown by a job handler when retrying cannot help (invalid payload, unreadable bundle): the job goes straight
 * to the dead-letter set on either adapter.
 */
export class UnrecoverableJobError extends Error {
  readonly code = 'UNRECOVERABLE_JOB';
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'UnrecoverableJobError';
  }
}
