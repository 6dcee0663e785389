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

/** The one logger factory: object-first pino with secrets redacted. */
export function createLogger(opts: { level: string; service: string }): Logger {
  return pino({ level: opts.level, base: { service: opts.service }, redact: { paths: REDACT_PATHS, censor: '[redacted]' } });
}
