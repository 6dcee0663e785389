import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { benchShiftAnalysis } from '../bench/lib/analysis.ts';
import { benchBurst, redisAnswers } from '../bench/lib/burst.ts';
import { ensureFleet } from '../bench/lib/fleet.ts';
import { benchIngest } from '../bench/lib/ingest.ts';
import { benchListLoad } from '../bench/lib/list-load.ts';
import { ensureShift, shiftSpec } from '../bench/lib/shift.ts';
import { checks, mergeResults, type SuiteResult } from '../bench/lib/suite.ts';

/**
 * Smoke of the benchmark harness (`npm run bench -- --smoke` uses the same functions): tiny workloads, the result
 * structure, and the exactly-once counts of the burst. Durations are only checked to be positive — seconds depend
 * on the machine and are never a pass/fail criterion here.
 */
const REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
let out: string;
let shiftPath: string;

beforeAll(async () => {
  out = await mkdtemp(join(tmpdir(), 'plumbline-bench-smoke-'));
  shiftPath = (await ensureShift(out, shiftSpec(20))).path;
});
afterAll(async () => {
  await rm(out, { recursive: true, force: true });
});

describe('Shift workload', () => {
  it('is generated once and reused from the cache by spec hash', async () => {
    const again = await ensureShift(out, shiftSpec(20));
    expect(again.path).toBe(shiftPath);
    expect(again.generatedS).toBeNull();
    expect(again.bytes).toBeGreaterThan(1000);
  });

  it('analysis and its read baseline report counts, columnar size and memory', async () => {
    const r = await benchShiftAnalysis(shiftPath);
    // 200 Hz IMU and 20 Hz odometry over 20 s, both ends included (simulator rates, common practice)
    expect(r.counts.imu).toBe(4001);
    expect(r.counts.odometry).toBe(401);
    // at least t + 6 IMU channels and t + 7 pose channels as float64
    expect(r.columnarBytes).toBeGreaterThanOrEqual((7 * 4001 + 8 * 401) * 8);
    expect(r.read.seconds).toBeGreaterThan(0);
    expect(r.analyze.maxRssBytes).toBeGreaterThan(r.columnarBytes);
    expect(r.analyze.heapPeakBytes).toBeGreaterThan(0);
    expect(['sound', 'doubtful', 'unfit']).toContain(r.analyze.verdict);
    expect(r.timeRatio).toBeCloseTo(r.analyze.seconds / r.read.seconds, 12);
  });
});

describe('ingest over loopback', () => {
  it('stores the upload as a run and measures both sides', async () => {
    const r = await benchIngest(shiftPath, out);
    expect(r.api.status).toBe(201);
    expect(r.baseline.status).toBe(201);
    expect(r.runId).toMatch(/^[0-9a-f-]{36}$/);
    expect(r.ratio).toBeCloseTo(r.api.mbPerS / r.baseline.mbPerS, 12);
  });
});

describe('Fleet and the run list under load', () => {
  it('builds the fleet with flags and reviews and serves the list', async () => {
    const fleet = await ensureFleet(out, 400, 10);
    // every 10th run flagged, every 4th reviewed (the fixture's rule)
    expect(fleet).toMatchObject({ runs: 400, robots: 10, flags: 40, reviews: 100 });
    const r = await benchListLoad(fleet.dbPath, out, 2, 1);
    expect(r.api.requests).toBeGreaterThan(0);
    expect(r.api.errors + r.api.non2xx).toBe(0);
    expect(r.baseline.errors + r.baseline.non2xx).toBe(0);
    expect(r.paths[1]).toContain('cursor=');
  });
});

describe('Burst', () => {
  it('records every run exactly once through the embedded queue', async () => {
    const r = await benchBurst({ outRoot: out, jobs: 6, workers: 1, redisUrl: null });
    expect(r).toMatchObject({ jobs: 6, done: 6, exactlyOnce: 6, duplicates: 0, reports: 6 });
  });

  it('records every run exactly once through BullMQ with two worker processes', async (ctx) => {
    if (!(await redisAnswers(REDIS_URL))) {
      if (process.env.REQUIRE_REDIS === '1') throw new Error(`REQUIRE_REDIS=1 but no Redis answers at ${REDIS_URL}`);
      console.warn(`[bench smoke] no Redis at ${REDIS_URL}: BullMQ burst skipped`);
      ctx.skip();
    }
    const r = await benchBurst({ outRoot: out, jobs: 6, workers: 2, redisUrl: REDIS_URL });
    expect(r).toMatchObject({ queue: 'bullmq', workers: 2, jobs: 6, done: 6, exactlyOnce: 6, duplicates: 0, reports: 6 });
  });
});

describe('targets and merging', () => {
  const base = (): SuiteResult => ({
    sizes: { name: 'smoke', shiftS: 1, fleetRuns: 1, fleetRobots: 1, connections: 1, loadS: 1, burstJobs: 1, inertialHours: 1, poseGraph: false },
    machine: { cores: 2, cpuModel: 'x', memoryBytes: 1, node: 'v20', platform: 'linux', date: '2026-12-02T00:00:00Z', loadAverage1m: 0 },
    workloads: {}, burst: [], checks: [], errors: [],
  });
  it('judges each figure against its target', () => {
    const r = base();
    r.burst = [{ queue: 'embedded', workers: 1, jobs: 10, enqueueS: 1, drainS: 1, jobsPerS: 10, done: 10, exactlyOnce: 9, duplicates: 1, reports: 11 }];
    r.inertial = { hours: 8, imuSamples: 1, seconds: 4.9, stages: {} };
    expect(checks(r).map((c) => [c.figure, c.met])).toEqual([
      ['burst embedded ×1: recorded exactly once', false],
      ['inertial estimators, seconds', true],
    ]);
  });
  it('replaces only the re-run benchmarks', () => {
    const a = base();
    a.inertial = { hours: 8, imuSamples: 1, seconds: 9, stages: {} };
    a.errors = [{ bench: 'inertial', message: 'old' }, { bench: 'list', message: 'kept' }];
    const b = base();
    b.inertial = { hours: 8, imuSamples: 1, seconds: 3, stages: {} };
    const m = mergeResults(a, b, new Set(['inertial']));
    expect(m.inertial?.seconds).toBe(3);
    expect(m.errors).toEqual([{ bench: 'list', message: 'kept' }]);
    expect(m.checks).toEqual([{ figure: 'inertial estimators, seconds', value: 3, target: '< 5 s', met: true }]);
  });
});
