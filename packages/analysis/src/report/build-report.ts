import type { GnssColumns, ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { REPORT_SCHEMA, type Corrections, type Estimates, type Flag, type Integrity, type Loop, type Report, type ReportSeries, type RunManifest, type Segment, type Verdict } from '@plumbline/contracts';
import type { InertialAnalysis } from '../estimators/inertial-types.ts';
import type { GnssResult } from '../gnss/gnss-compare.ts';
import type { LoopAnalysis } from '../loops/loop-analysis.ts';
import { MAX_KEYFRAMES } from '../loops/keyframes.ts';
import type { RepairedTrajectory } from '../loops/repair.ts';
import type { RunClock } from '../triage/flags.ts';
import { roundReport } from './round.ts';
import { fixSeries, imuNormSeries, pathSeries, scalarSeries, windowSeries, type ImuNorms } from './series.ts';

export interface ReportParts {
  /** The IMU magnitude series when already computed (`imuNormSeries(imu, clock.t0)`, e.g. on a helper thread). */
  imuNorms?: ImuNorms;
  analysisVersion: string;
  policyHash: string;
  manifest: RunManifest;
  odometry: OdometryColumns;
  imu: ImuColumns;
  gnssColumns: GnssColumns | null;
  clock: RunClock;
  distanceM: number;
  score: number;
  verdict: Verdict;
  estimates: Estimates;
  integrity: Integrity;
  flags: Flag[];
  segments: Segment[];
  inertial: InertialAnalysis;
  gnss: GnssResult | null;
  loops: LoopAnalysis;
  repair: RepairedTrajectory | null;
  /** Where the applied scale came from. */
  scaleSource: 'inertial' | 'gnss' | null;
}

/** Loops table: ids `loop-${n}` in the candidate order (tB, tA, source), times in run seconds. */
export function loopTable(loops: LoopAnalysis, t0: number): Loop[] {
  return loops.loops.map((l, i) => ({
    id: `loop-${i + 1}`,
    source: l.source,
    t_a: l.tA - t0,
    t_b: l.tB - t0,
    path_length_m: l.pathLength,
    translation_error_m: l.translationError,
    translation_error_pct: l.translationErrorPct,
    rotation_error_deg: l.rotationErrorDeg,
    rotation_error_deg_per_m: l.rotationErrorDegPerM,
    chi2: l.chi2,
    dof: l.dof,
    chi2_threshold: l.chi2Threshold,
    accepted: l.accepted,
  }));
}

function corrections(p: ReportParts, loops: Loop[]): Corrections {
  const notes: string[] = [];
  const r = p.repair;
  if (p.loops.solverNote) notes.push(p.loops.solverNote);
  if (r && p.loops.optimised) {
    const sp = p.loops.keyframeSpacing;
    const spacing = sp > 1 ? `, keyframe steps ${sp.toPrecision(3)}× the default 1 m / 10° / 1 s to stay within ${MAX_KEYFRAMES} nodes` : '';
    notes.push(`pose graph (${p.loops.mode}, ${p.loops.keyframes.length} keyframes${spacing}) moved poses by up to ${r.maxShift.toPrecision(3)} odometry units (mean ${r.meanShift.toPrecision(3)})`);
  } else notes.push('no pose-graph correction: no usable loop');
  if (r?.scaleApplied == null) notes.push('scale not applied: not estimated for this run');
  else notes.push(`scale ${r.scaleApplied.toPrecision(6)} applied, from the ${p.scaleSource === 'gnss' ? 'GNSS alignment' : 'inertial alignment'}`);
  if (r?.gravityRotationDeg == null) notes.push('gravity rotation not applied: tilt below the warning level or not estimated');
  else notes.push(`world rotated by ${r.gravityRotationDeg.toPrecision(3)}° to bring gravity onto −z (axis from static levelling)`);
  return {
    scale_applied: r?.scaleApplied ?? null,
    gravity_rotation_deg: r?.gravityRotationDeg ?? null,
    time_offset_applied_s: null,
    loops_used: loops.filter((l) => l.accepted).map((l) => l.id),
    loops_excluded: loops.filter((l) => !l.accepted).map((l) => l.id),
    notes,
  };
}

function series(p: ReportParts): ReportSeries {
  const t0 = p.clock.t0, s = p.inertial.series;
  const g = p.gnss && p.gnss.ok ? p.gnss : null;
  const norms = p.imuNorms ?? imuNormSeries(p.imu, t0);
  return {
    trajectory: pathSeries('odometry-world', p.odometry, t0),
    repaired_trajectory: p.repair ? pathSeries('repaired', p.repair.columns, t0) : null,
    gnss_fixes: g && p.gnssColumns ? fixSeries(p.gnssColumns.t, g.allE, g.allN, g.allU, p.gnssColumns.fix, t0) : null,
    scale: windowSeries(s.scale, t0),
    gravity_tilt_deg: windowSeries(s.gravity_tilt_deg, t0),
    rotation_residual_deg_s: windowSeries(s.rotation_residual_deg_s, t0),
    time_offset_ms: windowSeries(s.time_offset_s, t0, 'ms', 1000),
    gnss_error_m: g ? scalarSeries('m', g.track.t, g.errH, t0) : null,
    gnss_vertical_error_m: g ? scalarSeries('m', g.track.t, g.errV, t0) : null,
    gnss_heading_offset_deg: g ? scalarSeries('deg', g.windowT, g.windowHeadingDeg, t0) : null,
    imu_gyro_norm_rad_s: norms.gyro,
    imu_accel_norm_m_s2: norms.accel,
  };
}

/**
 * Assembles `plumbline-report/1` (packages/contracts/src/report.ts) from the analysis parts, in a fixed key order,
 * with every float rounded to 6 significant digits: equal input and policy give byte-identical JSON.
 */
export function buildReport(p: ReportParts): Report {
  const t0 = p.clock.t0, n = p.odometry.n;
  const loops = loopTable(p.loops, t0);
  const report: Report = {
    schema: REPORT_SCHEMA,
    analysis_version: p.analysisVersion,
    policy_hash: p.policyHash,
    run: {
      robot_id: p.manifest.robot_id,
      run_id: p.manifest.run_id,
      site: p.manifest.site,
      started_at: p.manifest.started_at,
      t0,
      duration_s: n > 1 ? p.odometry.t[n - 1]! - t0 : 0,
      distance_m: p.distanceM,
    },
    score: p.score,
    verdict: p.verdict,
    estimates: p.estimates,
    integrity: p.integrity,
    flags: p.flags,
    segments: p.segments,
    loops,
    corrections: corrections(p, loops),
    series: series(p),
  };
  return roundReport(report);
}
