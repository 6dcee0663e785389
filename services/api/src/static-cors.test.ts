import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from './testing.ts';

let t: TestApp;
let dist: string;
beforeAll(async () => {
  dist = await mkdtemp(join(tmpdir(), 'plumbline-dist-'));
  await mkdir(join(dist, 'assets'));
  await writeFile(join(dist, 'index.html'), '<!doctype html><title>Plumbline</title>');
  await writeFile(join(dist, 'assets', 'app.js'), 'export const x = 1;\n');
  await writeFile(join(dist, 'secret.txt'), 'outside assets');
  t = await createTestApp({ env: { PLUMBLINE_CORS_ORIGINS: 'https://ops.saltmarsh.example' }, deps: { dashboardDir: dist } });
});
afterAll(async () => {
  await t.close();
  await rm(dist, { recursive: true, force: true });
});

describe('dashboard static files', () => {
  it('serves index.html and assets with their content types, without a token', async () => {
    const i = await t.app.inject({ method: 'GET', url: '/' });
    expect(i.statusCode).toBe(200);
    expect(i.headers['content-type']).toBe('text/html; charset=utf-8');
    expect(i.body).toContain('<title>Plumbline</title>');
    const a = await t.app.inject({ method: 'GET', url: '/assets/app.js' });
    expect(a.statusCode).toBe(200);
    expect(a.headers['content-type']).toBe('text/javascript; charset=utf-8');
    expect(a.body).toBe('export const x = 1;\n');
  });
  it('does not leave the assets directory', async () => {
    for (const url of ['/assets/../secret.txt', '/assets/%2e%2e/secret.txt', '/assets/..%2fsecret.txt', '/assets/missing.js']) {
      const r = await t.app.inject({ method: 'GET', url });
      expect(r.statusCode, url).toBe(404);
      expect(r.body).not.toContain('outside assets');
    }
  });
});

describe('CORS', () => {
  it('answers a preflight from a configured origin and nothing for others', async () => {
    const ok = await t.app.inject({
      method: 'OPTIONS',
      url: '/api/v1/runs',
      headers: { origin: 'https://ops.saltmarsh.example', 'access-control-request-method': 'GET' },
    });
    expect(ok.statusCode).toBe(204);
    expect(ok.headers['access-control-allow-origin']).toBe('https://ops.saltmarsh.example');
    expect(ok.headers['access-control-allow-headers']).toContain('authorization');
    const other = await t.app.inject({ method: 'GET', url: '/healthz', headers: { origin: 'https://evil.example' } });
    expect(other.headers['access-control-allow-origin']).toBeUndefined();
  });
});
