import { spawnSync } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { gunzipSync } from 'node:zlib';
import { analyzeBundle, repairedTrajectoryCsv } from '@plumbline/analysis';
import { DEFAULT_POLICY } from '@plumbline/contracts';
import { createThreadedAnalyze, type ThreadedAnalyze } from './threaded-analyze.ts';

const SIMULATOR = fileURLToPath(new URL('../../../packages/simulator/src/cli/simulate.ts', import.meta.url));
let dir: string;
let threaded: ThreadedAnalyze;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'plumbline-thread-'));
  const r = spawnSync(process.execPath, ['--import', 'tsx', SIMULATOR, '--out', dir, '--duration', '20', '--archive'], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(r.stderr);
  threaded = createThreadedAnalyze(1);
});
afterAll(async () => {
  await threaded.close();
  await rm(dir, { recursive: true, force: true });
});

describe('analysis in a worker thread', () => {
  it('gives the same report as the analysis in this thread', async () => {
    const path = join(dir, 'bundle.tar.gz');
    const [inThread, here, csv] = await Promise.all([
      threaded.analyze(path, DEFAULT_POLICY),
      analyzeBundle(path, DEFAULT_POLICY),
      repairedTrajectoryCsv(path, DEFAULT_POLICY),
    ]);
    expect('repairedCsvGz' in inThread && inThread.report).toEqual(here);
    // The trajectory produced alongside the report is byte-identical to the analysis package's own export.
    const gz = 'repairedCsvGz' in inThread ? inThread.repairedCsvGz : null;
    expect(gz).not.toBeNull();
    expect(gunzipSync(gz!).toString('utf8')).toBe(csv);
  }, 60_000);
  it('passes bundle errors through with their name, code and file', async () => {
    const bad = join(dir, 'not-a-bundle.tar.gz');
    await writeFile(bad, 'plain text');
    const err = (await threaded.analyze(bad, DEFAULT_POLICY).catch((e: unknown) => e)) as Error & { code: string; file: string };
    expect(err.name).toBe('BundleError');
    expect(err.code).toBe('BUNDLE_UNSUPPORTED');
    expect(err.file).toBe('not-a-bundle.tar.gz');
  }, 60_000);
});
