import { Writable } from 'node:stream';
import pino from 'pino';
import { describe, expect, it } from 'vitest';
import { REDACT_PATHS } from './logger.ts';

describe('log redaction', () => {
  it('hides bearer tokens, plaintext tokens and webhook secrets', () => {
    const lines: string[] = [];
    const sink = new Writable({ write: (c, _e, cb) => (lines.push(String(c)), cb()) });
    const log = pino({ redact: { paths: REDACT_PATHS, censor: '[redacted]' } }, sink);
    log.info({ req: { headers: { authorization: 'Bearer plb_x_y' } } }, 'request');
    log.info({ token: 'plb_a_b', webhook: { secret: 'shh-0123456789abcdef' } }, 'created');
    const text = lines.join('');
    expect(text).not.toContain('plb_');
    expect(text).not.toContain('shh-');
    expect(text.match(/\[redacted\]/g)).toHaveLength(3);
  });
});
