import pino, { type Logger } from 'pino';

/** Paths redacted from every log line: credentials and webhook secrets, wherever they appear. */
export const REDACT_PATHS = [
  'req.headers.authorization',
  'req.headers.cookie',
  'headers.authorization',
  'authorization',
  'token',
  '*.token',
  'secret',
  '*.secret',
  '*.*.secret',
  'password',
  '*.password',
];

/**
 * The one logger factory: object-first pino with secrets redacted. Logs go to stdout, or to `file` (appended,
 * directory created) when a human reads stdout, as in the demo.
 */
export function createLogger(opts: { level: string; service: string; file?: string }): Logger {
  const options = { level: opts.level, base: { service: opts.service }, redact: { paths: REDACT_PATHS, censor: '[redacted]' } };
  return opts.file === undefined ? pino(options) : pino(options, pino.destination({ dest: opts.file, mkdir: true, append: true }));
}
