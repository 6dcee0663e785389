/**
 * The benchmark suite: workloads, figures and targets. `runSuite(SIZES.full)` is `npm run bench`;
 * `SIZES.smoke` is the CI-safe smoke (`npm run bench -- --smoke`). Each figure is a ratio against a baseline
 * measured in the same run; targets are checked here, never asserted in tests (seconds depend on the machine).
 */
import { availableParallelism, cpus, loadavg, totalmem } from 'node:os';
import { benchShiftAnalysis, type ShiftAnalysisResult } from './analysis.ts';
import { benchBurst, redisAnswers, type BurstResult } from './burst.ts';
import { benchInertial, benchPoseGraph, type InertialBenchResult, type PoseGraphBenchResult } from './estimator-benches.ts';
import { ensureFleet, type FleetWorkload } from './fleet.ts';
import { benchIngest, type IngestResult } from './ingest.ts';
import { benchListLoad, type ListLoadResult } from './list-load.ts';
import { ensureShift, shiftSpec, type ShiftWorkload } from './shift.ts';

export interface Sizes {
  name: 'full' | 'smoke';
  shiftS: number;
  fleetRuns: number;
  fleetRobots: number;
  connections: number;
  loadS: number;
  burstJobs: number;
  inertialHours: number;
  poseGraph: boolean;
}

export const SIZES: Record<'full' | 'smoke', Sizes> = {
  full: { name: 'full', shiftS: 8 * 3600, fleetRuns: 100_000, fleetRobots: 500, connections: 50, loadS: 20, burstJobs: 1000, inertialHours: 8, poseGraph: true },
  smoke: { name: 'smoke', shiftS: 30, fleetRuns: 2_000, fleetRobots: 20, connections: 5, loadS: 1, burstJobs: 10, inertialHours: 0.01, poseGraph: false },
};

export interface Check {
  figure: string;
  value: number;
  target: string;
  met: boolean;
}

export interface SuiteResult {
  sizes: Sizes;
  machine: { cores: number; cpuModel: string; memoryBytes: number; node: string; platform: string; date: string; loadAverage1m: number };
  workloads: { shift?: Omit<ShiftWorkload, 'spec'>; fleet?: FleetWorkload };
  shiftAnalysis?: ShiftAnalysisResult;
  ingest?: IngestResult;
  list?: ListLoadResult;
  burst: (BurstResult | { queue: 'bullmq'; workers: number; skipped: string })[];
  inertial?: InertialBenchResult;
  poseGraph?: PoseGraphBenchResult;
  checks: Check[];
  errors: { bench: string; message: string }[];
}

export interface SuiteOptions {
  outRoot: string;
  redisUrl: string;
  only?: Set<string>;
  log?: (line: string) => void;
  /** called after each benchmark with the result so far (the CLI writes results.json each time) */
  onProgress?: (r: SuiteResult) => Promise<void>;
}

function machine(): SuiteResult['machine'] {
  return {
    cores: availableParallelism(), cpuModel: cpus()[0]?.model ?? 'unknown', memoryBytes: totalmem(), node: process.version,
    platform: `${process.platform}-${process.arch}`, date: new Date().toISOString(), loadAverage1m: loadavg()[0] ?? 0,
  };
}

export function checks(r: SuiteResult): Check[] {
  const out: Check[] = [];
  const add = (figure: string, value: number, target: string, met: boolean) => out.push({ figure, value, target, met });
  const a = r.shiftAnalysis;
  if (a) {
    add('analyse Shift ÷ read Shift (time)', a.timeRatio, '≤ 2.0', a.timeRatio <= 2);
    add('analyse Shift, seconds', a.analyze.seconds, '≤ 30 s', a.analyze.seconds <= 30);
    if (a.analyze.cpuSeconds !== undefined && a.read.cpuSeconds !== undefined) {
      add('analyse Shift ÷ read Shift (CPU time)', a.analyze.cpuSeconds / a.read.cpuSeconds, '≤ 2.0', a.analyze.cpuSeconds / a.read.cpuSeconds <= 2);
    }
    if (a.analyze.cpuSeconds !== undefined) add('analyse Shift, CPU seconds (process)', a.analyze.cpuSeconds, '≤ 30 s', a.analyze.cpuSeconds <= 30);
    if (a.serial) add('analyse Shift on one thread ÷ read Shift (time)', a.serial.seconds / a.read.seconds, '≤ 2.0', a.serial.seconds / a.read.seconds <= 2);
    add('analyse Shift maxRSS ÷ columnar bytes', a.rssRatio, '≤ 3', a.rssRatio <= 3);
    add('analyse Shift maxRSS, GB', a.analyze.maxRssBytes / 1e9, '≤ 1.5 GB', a.analyze.maxRssBytes <= 1.5e9);
  }
  if (r.ingest) add('ingest ÷ discard (throughput)', r.ingest.ratio, '≥ 0.7', r.ingest.ratio >= 0.7);
  if (r.list) {
    add('run list ÷ constant route (req/s)', r.list.ratio, '≥ 0.5', r.list.ratio >= 0.5);
    add('run list p99, ms', r.list.api.p99Ms, '≤ 20 ms', r.list.api.p99Ms <= 20);
  }
  for (const b of r.burst) {
    if ('skipped' in b) continue;
    add(`burst ${b.queue} ×${b.workers}: recorded exactly once`, b.exactlyOnce, `= ${b.jobs}`, b.exactlyOnce === b.jobs && b.duplicates === 0);
  }
  if (r.inertial) add('inertial estimators, seconds', r.inertial.seconds, '< 5 s', r.inertial.seconds < 5);
  if (r.poseGraph) add('pose graph 30k/500, seconds', r.poseGraph.seconds, '< 5 s', r.poseGraph.seconds < 5);
  if (r.poseGraph && r.poseGraph.cpuSeconds !== null && r.poseGraph.cpuSeconds !== undefined) {
    add('pose graph 30k/500, CPU seconds', r.poseGraph.cpuSeconds, '< 5 s', r.poseGraph.cpuSeconds < 5);
  }
  return out;
}

export async function runSuite(sizes: Sizes, opts: SuiteOptions): Promise<SuiteResult> {
  const log = opts.log ?? (() => undefined);
  const want = (name: string) => !opts.only || opts.only.has(name);
  const r: SuiteResult = { sizes, machine: machine(), workloads: {}, burst: [], checks: [], errors: [] };
  const step = async (name: string, fn: () => Promise<void>) => {
    if (!want(name)) return;
    const t0 = performance.now();
    log(`${name}: running`);
    try {
      await fn();
      log(`${name}: ${((performance.now() - t0) / 1000).toFixed(1)} s`);
    } catch (err) {
      r.errors.push({ bench: name, message: err instanceof Error ? err.message : String(err) });
      log(`${name}: FAILED ${err instanceof Error ? err.message : String(err)}`);
    }
    r.checks = checks(r);
    await opts.onProgress?.(r);
  };
  let shiftPath: string | null = null;
  const shift = async () => {
    if (shiftPath) return shiftPath;
    const w = await ensureShift(opts.outRoot, shiftSpec(sizes.shiftS));
    const { spec: _spec, ...rest } = w;
    r.workloads.shift = rest;
    shiftPath = w.path;
    return w.path;
  };
  await step('analysis', async () => void (r.shiftAnalysis = await benchShiftAnalysis(await shift())));
  await step('ingest', async () => void (r.ingest = await benchIngest(await shift(), opts.outRoot, sizes.name === 'full' ? 3 : 1)));
  await step('list', async () => {
    const fleet = await ensureFleet(opts.outRoot, sizes.fleetRuns, sizes.fleetRobots);
    r.workloads.fleet = fleet;
    r.list = await benchListLoad(fleet.dbPath, opts.outRoot, sizes.connections, sizes.loadS);
  });
  await step('burst', async () => {
    r.burst.push(await benchBurst({ outRoot: opts.outRoot, jobs: sizes.burstJobs, workers: 1, redisUrl: null }));
    const redis = await redisAnswers(opts.redisUrl);
    for (const workers of [1, 2]) {
      if (!redis) {
        log(`burst: no Redis answers at ${opts.redisUrl}; BullMQ with ${workers} worker(s) skipped`);
        r.burst.push({ queue: 'bullmq', workers, skipped: `no Redis answered at ${opts.redisUrl}` });
        continue;
      }
      r.burst.push(await benchBurst({ outRoot: opts.outRoot, jobs: sizes.burstJobs, workers, redisUrl: opts.redisUrl }));
    }
  });
  await step('inertial', async () => void (r.inertial = await benchInertial(sizes.inertialHours)));
  if (sizes.poseGraph) await step('pose-graph', async () => void (r.poseGraph = await benchPoseGraph()));
  r.checks = checks(r);
  return r;
}

/** `previous` with the benchmarks named in `only` taken from `next` (machine and errors from both). */
export function mergeResults(previous: SuiteResult, next: SuiteResult, only: Set<string>): SuiteResult {
  const out: SuiteResult = { ...previous, machine: next.machine, workloads: { ...previous.workloads }, errors: [...previous.errors.filter((e) => !only.has(e.bench)), ...next.errors] };
  if (only.has('analysis')) {
    out.shiftAnalysis = next.shiftAnalysis;
    out.workloads.shift = next.workloads.shift ?? previous.workloads.shift;
  }
  if (only.has('ingest')) out.ingest = next.ingest;
  if (only.has('list')) {
    out.list = next.list;
    out.workloads.fleet = next.workloads.fleet ?? previous.workloads.fleet;
  }
  if (only.has('burst')) out.burst = next.burst;
  if (only.has('inertial')) out.inertial = next.inertial;
  if (only.has('pose-graph')) out.poseGraph = next.poseGraph;
  out.checks = checks(out);
  return out;
}
