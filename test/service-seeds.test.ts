import { spawnSync } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { inspectBundle } from '@plumbline/bundle';
import { createTestApp, type TestApp } from '../services/api/src/testing.ts';
import { ensureDemoTokens } from '../services/cli/src/demo-tokens.ts';
import { findSeeds, loadSeeds } from '../services/cli/src/seeds.ts';

const SIMULATOR = fileURLToPath(new URL('../packages/simulator/src/cli/simulate.ts', import.meta.url));
let seedDir: string;
let t: TestApp;

beforeAll(async () => {
  seedDir = await mkdtemp(join(tmpdir(), 'plumbline-seeds-'));
  // The demo fleet's layouts: <robot>/<run>/bundle/ directories, and an archive beside them.
  const sim = (out: string, robot: string, run: string, archive: boolean) => {
    const args = ['--import', 'tsx', SIMULATOR, '--out', join(seedDir, out), '--duration', '15', '--robot', robot, '--run', run, ...(archive ? ['--archive'] : [])];
    const r = spawnSync(process.execPath, args, { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(r.stderr);
  };
  sim('wren-01/r0302-0900', 'wren-01', 'r0302-0900', false);
  sim('tern-01/r0304-1500', 'tern-01', 'r0304-1500', true);
  t = await createTestApp({ inspectBundle });
});
afterAll(async () => {
  await t?.close();
  await rm(seedDir, { recursive: true, force: true });
});

describe('demo seed loading', () => {
  it('finds directory and archive bundles, uploads each with its robot token once, and skips them afterwards', async () => {
    const paths = await findSeeds(seedDir);
    expect(paths.map((p) => p.slice(seedDir.length + 1)).sort()).toEqual(['tern-01/r0304-1500/bundle.tar.gz', 'wren-01/r0302-0900/bundle']);
    const tokens = ensureDemoTokens(t.store, t.dir);
    const log: string[] = [];
    const first = await loadSeeds(t.app, t.store, paths, (r) => tokens.robotToken(r), (l) => log.push(l));
    expect(first.loaded.map((l) => l.runId).sort()).toEqual(['r0302-0900', 'r0304-1500']);
    expect(first.refused).toEqual([]);
    for (const { id } of first.loaded) expect(t.store.runs.get(id)?.status).toBe('queued');
    // Uploaded as the robots themselves: each run's robot has its own robot token.
    expect(Object.keys(tokens.robots()).sort()).toEqual(['tern-01', 'wren-01']);
    const again = await loadSeeds(t.app, t.store, paths, (r) => tokens.robotToken(r), () => undefined);
    expect(again).toMatchObject({ loaded: [], skipped: 2 });
    // A restarted demo gets the same tokens back from the data directory.
    const reopened = ensureDemoTokens(t.store, t.dir);
    expect(reopened.roles).toEqual(tokens.roles);
    expect(reopened.robotToken('wren-01')).toBe(tokens.robotToken('wren-01'));
  }, 60_000);
});
