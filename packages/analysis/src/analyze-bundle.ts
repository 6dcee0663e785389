import { readBundle, type GnssColumns, type ImuColumns, type LoopColumns, type OdometryColumns, type ReadStats } from '@plumbline/bundle';
import { DEFAULT_POLICY, type Policy, type PolicyThresholds, type Report, type RunManifest } from '@plumbline/contracts';
import pkg from '../package.json' with { type: 'json' };
import { analyzeInertial, type InertialInput, type InertialOptions } from './estimators/inertial.ts';
import { checkTiming } from './estimators/integrity.ts';
import type { InertialFinding } from './estimators/types.ts';
import { analyzeGeometryInThread, imuNormsInThread, warmGeometryThread } from './parallel/helper-worker.ts';
import type { ImuNorms } from './report/series.ts';
import { analyzeGeometry, runContext, type GeometryResult, type RunContext } from './geometry-part.ts';
import { distanceAt } from './loops/path.ts';
import { gravityCorrection, levelUpInOdomWorld } from './loops/gravity-level.ts';
import type { InertialAnalysis } from './estimators/inertial-types.ts';
import { repairTrajectory, trajectoryCsv, type RepairedTrajectory } from './loops/repair.ts';
import { buildReport } from './report/build-report.ts';
import { buildEstimates, buildIntegrity } from './report/estimates.ts';
import { buildFlags, type RunClock } from './triage/flags.ts';
import { policyHash } from './triage/policy-hash.ts';
import { buildSegments, healthScore, verdictOf } from './triage/score.ts';

/** Version stamped into every report (packages/analysis/package.json). */
export const ANALYSIS_VERSION: string = pkg.version;

/** The columnar content of a run bundle, as `readBundle` returns it (stats optional for synthetic input). */
export interface RunData {
  manifest: RunManifest;
  imu: ImuColumns;
  odometry: OdometryColumns;
  gnss: GnssColumns | null;
  loops: LoopColumns | null;
  stats?: { imu: ReadStats | null; odometry: ReadStats | null; gnss: ReadStats | null; loops: ReadStats | null };
}

export interface RunAnalysis {
  report: Report;
  repaired: RepairedTrajectory | null;
}

/** Latitude for normal gravity: the first finite GNSS fix, else none (standard gravity). */
function latitudeOf(g: GnssColumns | null): { latitudeDeg?: number; heightM?: number } {
  if (!g) return {};
  for (let i = 0; i < g.n; i++) if (Number.isFinite(g.lat[i]!) && g.fix[i]! > 0) return { latitudeDeg: g.lat[i]!, heightM: g.alt[i]! };
  return {};
}

function scaleOf(v: { value: number | null }): number | null {
  return v.value !== null && Number.isFinite(v.value) && v.value > 0 ? v.value : null;
}

/**
 * Gravity correction for the repair, for runs whose odometry claims a gravity-aligned world: the tilt is the
 * inertial estimate when there is one, else the static-levelling angle; it is applied only from the policy's
 * warning level on (a smaller tilt is within noise and left alone). The axis always comes from levelling.
 */
function gravityRotationFor(data: RunData, inertial: InertialAnalysis, th: PolicyThresholds): Float64Array | null {
  const warn = th['gravity-tilt'].warn;
  if (!data.manifest.odometry.world_gravity_aligned || warn === null) return null;
  const up = levelUpInOdomWorld(data.imu, data.odometry, inertial.integrity.stationary, data.manifest);
  if (!up) return null;
  const est = inertial.estimates.gravity_tilt_deg.value;
  const tiltDeg = est !== null && Number.isFinite(est) ? Math.abs(est) : (Math.acos(Math.min(1, Math.max(-1, up[2]!))) * 180) / Math.PI;
  return tiltDeg >= warn ? gravityCorrection(up, tiltDeg) : null;
}

/** What every part of one run's analysis shares: the resolved policy, the run clock and the inertial options. */
interface RunSetup extends RunContext {
  data: RunData;
  clock: RunClock;
  inertialInput: InertialInput;
  inertialOptions: InertialOptions;
}

function setUp(data: RunData, policy: Policy): RunSetup {
  const { manifest, imu, odometry } = data;
  if (odometry.n < 2) throw new RangeError('analyzeRun: the odometry has fewer than two poses (bundle reader should reject this)');
  const ctx = runContext(manifest, odometry, policy);
  const t0 = odometry.t[0]!;
  const clock: RunClock = { t0, distanceAt: (t) => distanceAt(odometry.t, ctx.dist, t) };
  return {
    ...ctx, data, clock,
    inertialInput: { manifest, imu, odometry },
    inertialOptions: { windowS: ctx.th.window_s, windowOverlap: ctx.th.window_overlap, ...latitudeOf(data.gnss) },
  };
}

/** Repair, triage and the report, from the three analyses. */
function finish(r: RunSetup, inertial: InertialAnalysis, { gnss, loops }: GeometryResult, imuNorms?: ImuNorms): RunAnalysis {
  const { data, th, dist, clock } = r;
  const { manifest, imu, odometry } = data;
  const t0 = clock.t0;
  // Scale for the repair: the inertial estimate, else the GNSS alignment's when it was free (monocular odometry).
  const inertialScale = scaleOf(inertial.estimates.scale);
  const gnssScale = gnss && gnss.ok && gnss.scaleFree ? scaleOf({ value: gnss.global.scale }) : null;
  const scaleSource = inertialScale !== null ? 'inertial' : gnssScale !== null ? 'gnss' : null;
  const repaired = repairTrajectory({
    odometry, keyframes: loops.keyframes, optimised: loops.optimised, scale: inertialScale ?? gnssScale,
    gravityRotation: gravityRotationFor(data, inertial, th),
  });
  const findings: InertialFinding[] = [...inertial.findings, ...(gnss && gnss.ok ? gnss.findings : []), ...loops.findings];
  const flags = buildFlags(findings, th, clock);
  const distanceM = dist[odometry.n - 1]!;
  const stats = data.stats ?? { imu: null, odometry: null, gnss: null, loops: null };
  const report = buildReport({
    ...(imuNorms ? { imuNorms } : {}),
    analysisVersion: ANALYSIS_VERSION,
    policyHash: policyHash(r.resolved),
    manifest, odometry, imu, gnssColumns: data.gnss, clock, distanceM,
    score: healthScore({ flags, distanceM, durationS: odometry.t[odometry.n - 1]! - t0 }, th),
    verdict: verdictOf(flags),
    estimates: buildEstimates(inertial, gnss, loops),
    integrity: buildIntegrity({
      inertial,
      files: { imu: manifest.imu.file, odometry: manifest.odometry.file, gnss: data.gnss ? manifest.gnss?.file ?? 'gnss' : null, loops: data.loops ? manifest.loops?.file ?? 'loops.csv' : null },
      stats,
      gnssTiming: data.gnss ? checkTiming(data.gnss.t, data.gnss.n, null, [data.gnss.lat, data.gnss.lon]) : null,
      gnss, t0, badLineFraction: th.bad_line_fraction,
    }),
    flags,
    segments: buildSegments(flags, th.window_s / 2),
    inertial, gnss, loops, repair: repaired, scaleSource,
  });
  return { report, repaired };
}

/**
 * Analyses one run: inertial checks, GNSS comparison, loop consistency and pose graph, triage, repair and the
 * report. Pure: no I/O, no clock, no randomness; equal input and policy give a byte-identical report.
 */
export function analyzeRunDetailed(data: RunData, policy: Policy = DEFAULT_POLICY): RunAnalysis {
  const r = setUp(data, policy);
  const inertial = analyzeInertial(r.inertialInput, r.inertialOptions);
  return finish(r, inertial, analyzeGeometry(data, policy, r));
}

/**
 * The same analysis on two threads: a helper thread compares with GNSS and solves the pose graph (and, for IMU
 * columns on SharedArrayBuffer, computes the report's IMU magnitude series) while this thread runs the inertial
 * estimators; the report is byte-identical to `analyzeRunDetailed`'s. Columns on SharedArrayBuffer (readBundle's
 * `sharedMemory`) reach the helper without a copy; the IMU of other input is never sent.
 */
export async function analyzeRunParallel(data: RunData, policy: Policy = DEFAULT_POLICY): Promise<RunAnalysis> {
  const r = setUp(data, policy);
  const { manifest, odometry, gnss, loops } = data;
  const pending = analyzeGeometryInThread({ manifest, odometry, gnss, loops }, policy);
  const norms = data.imu.t.buffer instanceof SharedArrayBuffer ? imuNormsInThread(data.imu, r.clock.t0) : undefined;
  const inertial = analyzeInertial(r.inertialInput, r.inertialOptions);
  return finish(r, inertial, await pending, norms && (await norms));
}

/** How `analyzeBundle` and its siblings run: `parallel` uses a second thread (see analyzeBundleDetailed). */
export interface AnalyzeOptions {
  parallel?: boolean;
}

/**
 * Reads a bundle and analyses it. With `parallel`, the columns are read onto shared memory and, once read, the
 * geometry part (GNSS, loops, pose graph) and the IMU series run on a helper thread beside the inertial estimators.
 * Starting the geometry earlier, during the IMU parse, measured slower: the parse and its gunzip already keep both
 * cores busy. The report is the same either way.
 */
export async function analyzeBundleDetailed(path: string, policy: Policy = DEFAULT_POLICY, options: AnalyzeOptions = {}): Promise<RunAnalysis & { odometry: OdometryColumns }> {
  if (!options.parallel) {
    const b = await readBundle(path);
    return { ...analyzeRunDetailed(b, policy), odometry: b.odometry };
  }
  // the helper starts while the bundle is read; it gets its work after the read, when the second core is free
  warmGeometryThread();
  const b = await readBundle(path, { sharedMemory: true });
  return { ...(await analyzeRunParallel(b, policy)), odometry: b.odometry };
}

/** Pure analysis of one run's columnar data under a policy (default: DEFAULT_POLICY). */
export function analyzeRun(data: RunData, policy: Policy = DEFAULT_POLICY): Report {
  return analyzeRunDetailed(data, policy).report;
}

/** Reads a bundle (directory or archive) through packages/bundle — the only I/O of the analysis — and analyses it. */
export async function analyzeBundle(path: string, policy: Policy = DEFAULT_POLICY, options: AnalyzeOptions = {}): Promise<Report> {
  return (await analyzeBundleDetailed(path, policy, options)).report;
}

/**
 * The repaired trajectory of a bundle as CSV text in the odometry format (`t,x,y,z,qw,qx,qy,qz`): pose-graph
 * corrected, in metres when the scale was estimated. Re-runs the (deterministic) analysis under the same policy.
 */
export async function repairedTrajectoryCsv(path: string, policy: Policy = DEFAULT_POLICY, options: AnalyzeOptions = {}): Promise<string> {
  const { repaired, odometry } = await analyzeBundleDetailed(path, policy, options);
  return trajectoryCsv(repaired ? repaired.columns : odometry);
}

/** The original odometry of a bundle as CSV text in the same format (quality column dropped). */
export async function originalTrajectoryCsv(path: string): Promise<string> {
  const b = await readBundle(path);
  return trajectoryCsv(b.odometry);
}
