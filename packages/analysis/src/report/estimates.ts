import type { ReadStats } from '@plumbline/bundle';
import type { Estimates, Integrity, Interval, ScalarEstimate, StreamIntegrity, Vec3Estimate } from '@plumbline/contracts';
import type { InertialAnalysis } from '../estimators/inertial-types.ts';
import type { StreamTiming } from '../estimators/integrity.ts';
import type { ScalarResult, TimeInterval, Vec3Result } from '../estimators/types.ts';
import type { GnssResult } from '../gnss/gnss-compare.ts';
import type { LoopAnalysis } from '../loops/loop-analysis.ts';

/** A scalar with a finite value and sigma, or a null value with its reason. */
export function scalarEstimate(r: ScalarResult): ScalarEstimate {
  if (r.value === null) return { value: null, sigma: null, unit: r.unit, reason: r.reason };
  if (!Number.isFinite(r.value)) return { value: null, sigma: null, unit: r.unit, reason: 'insufficient: estimate not finite' };
  const sigma = r.sigma !== null && Number.isFinite(r.sigma) && r.sigma >= 0 ? r.sigma : null;
  return { value: r.value, sigma, unit: r.unit };
}

export function vec3Estimate(r: Vec3Result): Vec3Estimate {
  if (r.value === null) return { value: null, sigma: null, unit: r.unit, reason: r.reason };
  if (!r.value.every(Number.isFinite)) return { value: null, sigma: null, unit: r.unit, reason: 'insufficient: estimate not finite' };
  const sigma = r.sigma && r.sigma.every((s) => Number.isFinite(s) && s >= 0) ? r.sigma : null;
  return { value: r.value, sigma, unit: r.unit };
}

const none = (unit: string, reason: string): ScalarEstimate => ({ value: null, sigma: null, unit, reason });

/** Run-level estimates: the inertial ones one-to-one, plus GNSS RMSE and loop drift. */
export function buildEstimates(inertial: InertialAnalysis, gnss: GnssResult | null, loops: LoopAnalysis): Estimates {
  const e = inertial.estimates;
  const drift = loops.driftPct, driftR = loops.driftDegPerM;
  const noLoops = loops.loops.length === 0 ? 'unobservable: no loop candidates in this run' : 'unobservable: no accepted loop of at least 20 m of path';
  return {
    time_offset_s: scalarEstimate(e.time_offset_s),
    clock_skew_ppm: scalarEstimate(e.clock_skew_ppm),
    extrinsic_rotation_error_deg: scalarEstimate(e.extrinsic_rotation_error_deg),
    gyro_bias_rad_s: vec3Estimate(e.gyro_bias_rad_s),
    accel_bias_m_s2: vec3Estimate(e.accel_bias_m_s2),
    gravity_tilt_deg: scalarEstimate(e.gravity_tilt_deg),
    gravity_magnitude_m_s2: scalarEstimate(e.gravity_magnitude_m_s2),
    scale: scalarEstimate(e.scale),
    scale_drift_pct_per_100m: scalarEstimate(e.scale_drift_pct_per_100m),
    gyro_noise_density: scalarEstimate(e.gyro_noise_density),
    accel_noise_density: scalarEstimate(e.accel_noise_density),
    gnss_rmse_m: gnss === null ? none('m', 'unobservable: the bundle has no GNSS') : gnss.ok ? { value: gnss.rmseH, sigma: null, unit: 'm' } : none('m', gnss.reason),
    gnss_scale: gnssScale(gnss),
    loop_drift_pct: drift ? { value: drift.value, sigma: drift.sigma, unit: '%' } : none('%', noLoops),
    loop_drift_deg_per_m: driftR ? { value: driftR.value, sigma: driftR.sigma, unit: 'deg/m' } : none('deg/m', noLoops),
  };
}

/** Scale of odometry against GNSS (free only for monocular odometry; metric odometry holds it at 1). */
function gnssScale(gnss: GnssResult | null): ScalarEstimate {
  if (gnss === null) return none('', 'unobservable: the bundle has no GNSS');
  if (!gnss.ok) return none('', gnss.reason);
  if (!gnss.scaleFree) return none('', 'not applicable: metric odometry, scale held at 1 in the GNSS alignment');
  return { value: gnss.global.scale, sigma: null, unit: '' };
}

function intervals(xs: readonly TimeInterval[], t0: number): Interval[] {
  return xs.map((x) => ({ t_start: x.tStart - t0, t_end: x.tEnd - t0 }));
}

function stream(file: string, timing: StreamTiming | null, stats: ReadStats | null, t0: number, badLineFraction: number): StreamIntegrity {
  const lines = stats ? Math.max(stats.lines, 1) : 1;
  const bad = stats?.badLines ?? 0;
  return {
    file,
    samples: timing?.samples ?? stats?.samples ?? 0,
    bad_lines: bad,
    nominal_rate_hz: timing?.nominalRateHz ?? null,
    measured_rate_hz: timing?.measuredRateHz ?? null,
    t_first: timing?.tFirst != null ? timing.tFirst - t0 : null,
    t_last: timing?.tLast != null ? timing.tLast - t0 : null,
    gaps: timing ? intervals(timing.gaps, t0) : [],
    duplicate_timestamps: timing?.duplicateTimestamps ?? 0,
    non_monotonic_timestamps: timing?.nonMonotonicTimestamps ?? 0,
    non_finite_values: timing?.nonFiniteValues ?? stats?.nonFinite ?? 0,
    /** Damaged when the fraction of unparseable lines exceeds the policy's bad_line_fraction. */
    damaged: bad / lines > badLineFraction,
  };
}

export interface IntegrityInput {
  inertial: InertialAnalysis;
  files: { imu: string; odometry: string; gnss: string | null; loops: string | null };
  stats: { imu: ReadStats | null; odometry: ReadStats | null; gnss: ReadStats | null; loops: ReadStats | null };
  gnssTiming: StreamTiming | null;
  gnss: GnssResult | null;
  t0: number;
  badLineFraction: number;
}

/** Integrity section: per-stream timing and parsing, saturation, stationary intervals, units ratios; times in run seconds. */
export function buildIntegrity(x: IntegrityInput): Integrity {
  const { inertial: ia, t0 } = x;
  const gnssStream = x.files.gnss === null ? null : {
    ...stream(x.files.gnss, x.gnssTiming, x.stats.gnss, t0, x.badLineFraction),
    good_fixes: x.gnss?.gating ? x.gnss.gating.nGood : 0,
    outages: x.gnss?.gating ? intervals(x.gnss.gating.outages, t0) : [],
  };
  return {
    imu: stream(x.files.imu, ia.integrity.imu, x.stats.imu, t0, x.badLineFraction),
    odometry: stream(x.files.odometry, ia.integrity.odometry, x.stats.odometry, t0, x.badLineFraction),
    gnss: gnssStream,
    loops: x.files.loops === null ? null : stream(x.files.loops, null, x.stats.loops, t0, x.badLineFraction),
    saturation: ia.integrity.saturation.map((s) => ({ t_start: s.tStart - t0, t_end: s.tEnd - t0, axis: s.axis, samples: s.samples })),
    stationary: intervals(ia.integrity.stationary, t0),
    units: { accel_rest_ratio: ia.integrity.units.accelRestRatio, gyro_odometry_rate_ratio: ia.integrity.units.gyroOdometryRateRatio },
  };
}
