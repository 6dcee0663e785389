import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const MAIN = fileURLToPath(new URL('./main.ts', import.meta.url));

describe('npm run worker: configuration checked at start-up', () => {
  it('stops with exit 2 naming PLUMBLINE_TOKEN when a remote worker has no token', () => {
    // Nothing is opened before the check: the Redis URL points at a closed port and the data dir does not exist.
    const r = spawnSync(process.execPath, ['--import', 'tsx', MAIN], {
      encoding: 'utf8',
      timeout: 30_000,
      env: { PATH: process.env.PATH ?? '', REDIS_URL: 'redis://127.0.0.1:9', PLUMBLINE_API_URL: 'http://127.0.0.1:9', PLUMBLINE_DATA_DIR: '/nonexistent/plumbline' },
    });
    expect(r.status).toBe(2);
    expect(r.stdout + r.stderr).toMatch(/PLUMBLINE_TOKEN/);
  }, 35_000);
});
