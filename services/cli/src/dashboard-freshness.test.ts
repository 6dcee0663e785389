import { mkdirSync, mkdtempSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dashboardBuildIsStale } from './dashboard-freshness.ts';

let dir: string;
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'plumbline-dash-'));
  mkdirSync(join(dir, 'src', 'views'), { recursive: true });
  mkdirSync(join(dir, 'dist'));
  writeFileSync(join(dir, 'src', 'views', 'run-page.ts'), 'export {};');
  writeFileSync(join(dir, 'build.ts'), 'export {};');
});
afterEach(() => rmSync(dir, { recursive: true, force: true }));

const at = (path: string, isoTime: string) => utimesSync(path, new Date(isoTime), new Date(isoTime));

describe('dashboardBuildIsStale', () => {
  it('is stale without a build, fresh after one, stale again when a nested source or the build script changes', () => {
    const index = join(dir, 'dist', 'index.html');
    const sources = [join(dir, 'src'), join(dir, 'build.ts')];
    expect(dashboardBuildIsStale(index, sources)).toBe(true);
    writeFileSync(index, '<!doctype html>');
    at(join(dir, 'src', 'views', 'run-page.ts'), '2026-12-01T08:00:00Z');
    at(join(dir, 'build.ts'), '2026-12-01T08:00:00Z');
    at(index, '2026-12-01T09:00:00Z');
    expect(dashboardBuildIsStale(index, sources)).toBe(false);
    at(join(dir, 'src', 'views', 'run-page.ts'), '2026-12-01T10:00:00Z');
    expect(dashboardBuildIsStale(index, sources)).toBe(true);
    at(join(dir, 'src', 'views', 'run-page.ts'), '2026-12-01T08:00:00Z');
    at(join(dir, 'build.ts'), '2026-12-01T10:00:00Z');
    expect(dashboardBuildIsStale(index, sources)).toBe(true);
  });
});
