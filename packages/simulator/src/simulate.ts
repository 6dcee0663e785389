/** In-memory simulation of a whole run (tests and seed runs, up to tens of minutes). */
import type { RunManifestInput } from '@plumbline/contracts';
import { createScenario } from './scenario.ts';
import type { Scenario } from './scenario.ts';
import { createGnssBlock, createGnssGenerator } from './sensors/gnss.ts';
import type { GnssBlock } from './sensors/gnss.ts';
import { createImuBlock, createImuGenerator } from './sensors/imu.ts';
import type { ImuBlock } from './sensors/imu.ts';
import { generateLoops } from './sensors/loops.ts';
import type { LoopBlock } from './sensors/loops.ts';
import { createOdometryBlock, createOdometryGenerator } from './sensors/odometry.ts';
import type { OdometryBlock } from './sensors/odometry.ts';
import type { RunSpec } from './spec.ts';
import { buildManifest, buildTruth } from './truth.ts';
import type { RunTruth } from './truth.ts';

export interface SimulatedRun {
  spec: RunSpec;
  scenario: Scenario;
  /** manifest with the default file names of writeRun (`imu.csv`, …; `.gz` added when compressed) */
  manifest: RunManifestInput;
  truth: RunTruth;
  imu: ImuBlock;
  odometry: OdometryBlock;
  gnss: GnssBlock | null;
  loops: LoopBlock | null;
}

/** Longest run simulateRun accepts; longer runs go through writeLongRun, which streams. */
export const MAX_IN_MEMORY_S = 3600;

/** Simulates a run in memory: columnar sensor data, manifest and truth. Deterministic in spec. */
export function simulateRun(spec: RunSpec): SimulatedRun {
  if (spec.durationS > MAX_IN_MEMORY_S) throw new RangeError(`durationS ${spec.durationS} > ${MAX_IN_MEMORY_S}: use writeLongRun`);
  const scenario = createScenario(spec);
  const ig = createImuGenerator(scenario);
  const imu = createImuBlock(ig.count);
  ig.fill(0, ig.count, imu);
  const og = createOdometryGenerator(scenario);
  const odometry = createOdometryBlock(og.count);
  og.fill(0, og.count, odometry);
  let gnss: GnssBlock | null = null;
  let multipath: ReturnType<typeof createGnssGenerator>['multipath'] = [];
  if (hasGnss(scenario)) {
    const gg = createGnssGenerator(scenario);
    gnss = createGnssBlock(gg.count);
    gg.fill(0, gg.count, gnss);
    multipath = gg.multipath;
  }
  const lp = spec.loops ? generateLoops(scenario) : null;
  const manifest = buildManifest(scenario, defaultFiles(scenario, false));
  const truth = buildTruth(scenario, {
    multipath,
    falseLoops: lp?.falseLoops ?? [],
    loopCount: lp?.loops.n ?? 0,
    imuSamplesRemoved: gapCounts(spec),
  });
  return { spec, scenario, manifest, truth, imu, odometry, gnss, loops: lp?.loops ?? null };
}

/** GNSS is written only when the run has a receiver and spends time outdoors (an all-indoor run has no fixes). */
export function hasGnss(s: Scenario): boolean {
  return s.spec.gnssRateHz > 0 && s.motion.outdoorIntervals.length > 0;
}

/** File names inside the bundle. */
export function defaultFiles(s: Scenario, gzip: boolean) {
  const spec = s.spec;
  const z = gzip ? '.gz' : '';
  return {
    odometry: `odometry.csv${z}`,
    imu: `imu.csv${z}`,
    gnss: hasGnss(s) ? (spec.gnssFormat === 'nmea' ? 'gnss.nmea' : `gnss.csv${z}`) : undefined,
    loops: spec.loops ? `loops.csv${z}` : undefined,
  };
}

/** Number of IMU instants inside each imu-gap (same sample grid and predicate as the generator). */
export function gapCounts(spec: RunSpec): number[] {
  const dt = 1 / spec.imuRateHz;
  const count = Math.round(spec.durationS * spec.imuRateHz) + 1;
  return spec.faults
    .filter((f) => f.kind === 'imu-gap')
    .map((f) => {
      const a = f.startS ?? 0, b = f.endS ?? 0;
      let n = 0;
      for (let k = Math.max(0, Math.floor(a / dt) - 2); k < Math.min(count, Math.ceil(b / dt) + 2); k++) {
        if (k * dt >= a && k * dt < b) n++;
      }
      return n;
    });
}
