/**
 * analyzeInertial: the inertial consistency checks of one run, in order — integrity → time offset → units →
 * preintegration → rotation (gyro bias, extrinsic) → gravity/scale windows → scale drift → Allan → accelerometer
 * bias → findings. Pure function over columnar data; see inertial-types.ts for the result.
 */
import type { RunManifest } from '@plumbline/contracts';
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { geodesy } from '@plumbline/geometry';
import { accelBiasFromStationary, combineAccelBias } from './accel-bias.ts';
import { buildAlignmentRows } from './alignment-rows.ts';
import { estimateNoiseDensities } from './allan.ts';
import { buildFindings } from './inertial-findings.ts';
import type { InertialAnalysis } from './inertial-types.ts';
import { checkImu, checkTiming } from './integrity.ts';
import { NO_CLOCK_OFFSET, selectKeyframes, type ClockModel } from './keyframes.ts';
import { preintegrateBatch } from './preintegration-batch.ts';
import { DEFAULT_IMU_NOISE } from './preintegration.ts';
import { estimateRotation } from './rotation.ts';
import { estimateGravityScale } from './gravity-scale.ts';
import { estimateScaleDrift } from './scale-drift.ts';
import { estimateTimeOffset } from './time-offset.ts';
import { checkUnits } from './units.ts';
import { extrinsicError } from './extrinsic-error.ts';
import { findPoseJumps, type PoseJump } from './pose-jump.ts';
import { emptySeries, noScalar, scalar, type ScalarResult, type Vec3Result } from './types.ts';

export interface InertialOptions {
  /** Local normal gravity (m/s²); else from latitudeDeg/heightM (WGS-84 Somigliana); else 9.80665. */
  gravityMS2?: number;
  latitudeDeg?: number;
  heightM?: number;
  /** Analysis windows (policy knobs window_s, window_overlap): default 10 s, 0.5. */
  windowS?: number;
  windowOverlap?: number;
  /** Time-offset windows, s (default 60). */
  timeOffsetWindowS?: number;
  /** Keyframe spacing, s (default 0.25); alignment triplets span 2 × `alignmentStride` keyframe intervals (default 4, i.e. 1-s intervals). */
  keyframeS?: number;
  alignmentStride?: number;
  /** Composed interval length of the rotation estimator, s (default 0.5). */
  rotationSpanS?: number;
}

export interface InertialInput {
  manifest: RunManifest;
  imu: ImuColumns;
  odometry: OdometryColumns;
}

function gravityOf(o: InertialOptions): number {
  if (o.gravityMS2 !== undefined) return o.gravityMS2;
  if (o.latitudeDeg !== undefined) return geodesy.normalGravity((o.latitudeDeg * Math.PI) / 180, o.heightM ?? 0);
  return geodesy.STANDARD_GRAVITY;
}

function meanGyroAtRest(imu: ImuColumns, rest: readonly { tStart: number; tEnd: number }[]): Float64Array {
  const s = new Float64Array(3);
  let m = 0, i = 0;
  for (const r of rest) {
    while (i < imu.n && imu.t[i]! < r.tStart) i++;
    for (; i < imu.n && imu.t[i]! <= r.tEnd; i++, m++) {
      s[0] = s[0]! + imu.gx[i]!;
      s[1] = s[1]! + imu.gy[i]!;
      s[2] = s[2]! + imu.gz[i]!;
    }
  }
  return m > 0 ? s.map((v) => v / m) : s;
}

const vecNone = (unit: string, reason: string): Vec3Result => ({ value: null, sigma: null, unit, reason });

/** Runs every inertial estimator on one run. See the module comment and inertial-types.ts. */
export function analyzeInertial(input: InertialInput, options: InertialOptions = {}): InertialAnalysis {
  const { manifest, imu, odometry: odom } = input;
  const timings: Record<string, number> = {};
  let clockT = performance.now();
  const lap = (name: string) => {
    const now = performance.now();
    timings[name] = now - clockT;
    clockT = now;
  };
  const G = gravityOf(options);
  const windowS = options.windowS ?? 10, overlap = options.windowOverlap ?? 0.5;
  const noise = {
    gyroNoiseDensity: manifest.imu.gyro_noise_density ?? DEFAULT_IMU_NOISE.gyroNoiseDensity,
    accelNoiseDensity: manifest.imu.accel_noise_density ?? DEFAULT_IMU_NOISE.accelNoiseDensity,
  };
  const { timing: imuTiming, saturation, stationary } = checkImu(
    imu, odom, manifest.imu.rate_hz, manifest.imu.gyro_range_rad_s ?? null, manifest.imu.accel_range_m_s2 ?? null, noise.gyroNoiseDensity, noise.accelNoiseDensity,
  );
  const odomTiming = checkTiming(odom.t, odom.n, null, [odom.x, odom.y, odom.z, odom.qw, odom.qx, odom.qy, odom.qz]);
  lap('integrity');
  const bg0 = meanGyroAtRest(imu, stationary);
  const offset = estimateTimeOffset(imu, odom, { windowS: options.timeOffsetWindowS ?? 60, gyroBiasRadS: bg0 });
  lap('timeOffset');
  const skewOk = offset.ok && offset.skewPpm !== null && Math.abs(offset.skewPpm) > 3 * offset.skewSigmaPpm!;
  const clock: ClockModel = offset.ok ? { offsetS: offset.offsetS, skew: skewOk ? offset.skewPpm! * 1e-6 : 0, tRef: offset.tRef } : NO_CLOCK_OFFSET;
  const units = checkUnits(imu, odom, stationary, G, clock.offsetS);
  lap('units');
  const base = {
    integrity: { imu: imuTiming, odometry: odomTiming, saturation, stationary, units },
    clock,
    time_offset_s: offset.ok ? scalar(offset.offsetS, offset.offsetSigmaS, 's') : noScalar('s', offset.reason),
    clock_skew_ppm: !offset.ok ? noScalar('ppm', offset.reason)
      : offset.skewPpm === null ? noScalar('ppm', offset.skewReason ?? 'insufficient') : scalar(offset.skewPpm, offset.skewSigmaPpm, 'ppm'),
    offsetSeries: offset.ok ? offset.windows : emptySeries('s', 0),
  };
  const unitsBad = (units.gyroOdometryRateRatio !== null && Math.abs(units.gyroOdometryRateRatio - 1) > 0.5)
    || (units.accelRestRatio !== null && Math.abs(units.accelRestRatio - 1) > 0.5);
  const rest = runModelEstimators(input, options, G, noise, bg0, clock, unitsBad, windowS, overlap, lap);
  const noiseD = estimateNoiseDensities(imu, stationary, { gyro: manifest.imu.gyro_noise_density, accel: manifest.imu.accel_noise_density });
  lap('allan');
  const stationaryBias = accelBiasFromStationary(imu, stationary, G);
  const accelBias = unitsBad ? vecNone('m/s²', 'not estimated: units check failed') : combineAccelBias(rest.alignmentBias, stationaryBias);
  const analysis: InertialAnalysis = {
    integrity: base.integrity,
    estimates: {
      time_offset_s: base.time_offset_s,
      clock_skew_ppm: base.clock_skew_ppm,
      extrinsic_rotation_error_deg: rest.extrinsicError,
      gyro_bias_rad_s: rest.gyroBias,
      accel_bias_m_s2: accelBias,
      gravity_tilt_deg: rest.tilt,
      gravity_magnitude_m_s2: scalar(G, null, 'm/s²'),
      scale: rest.scale,
      scale_drift_pct_per_100m: rest.drift,
      gyro_noise_density: noiseD.gyroNoiseDensity,
      accel_noise_density: noiseD.accelNoiseDensity,
    },
    series: {
      scale: rest.scaleSeries,
      gravity_tilt_deg: rest.tiltSeries,
      rotation_residual_deg_s: rest.rotationSeries,
      time_offset_s: base.offsetSeries,
      alignment_residual_m_s: rest.residualSeries,
    },
    extrinsic: rest.extrinsic,
    clock,
    scaleSteps: rest.steps,
    findings: [],
    timingsMs: timings,
  };
  analysis.findings = buildFindings(analysis, rest.poseJumps, rest.extrinsicObservedDeg, windowS, manifest.odometry.world_gravity_aligned);
  lap('findings');
  return analysis;
}

type Lap = (name: string) => void;

/** Stages that need a consistent sensor model: preintegration, rotation, alignment, drift. */
function runModelEstimators(
  input: InertialInput, options: InertialOptions, G: number, noise: typeof DEFAULT_IMU_NOISE, bg0: Float64Array,
  clock: ClockModel, unitsBad: boolean, windowS: number, overlap: number, lap: Lap,
) {
  const { manifest, imu, odometry: odom } = input;
  const skip = (reason: string) => ({
    extrinsicError: noScalar('deg', reason), extrinsicObservedDeg: null as number | null, gyroBias: vecNone('rad/s', reason),
    alignmentBias: vecNone('m/s²', reason), tilt: noScalar('deg', reason), scale: noScalar('', reason), drift: noScalar('%/100m', reason),
    scaleSeries: emptySeries('', 0), tiltSeries: emptySeries('deg', 0), rotationSeries: emptySeries('deg/s', 0), residualSeries: emptySeries('m/s', 0),
    extrinsic: null, steps: [], poseJumps: [] as PoseJump[],
  });
  if (unitsBad) return skip('not estimated: units check failed');
  const kf = selectKeyframes(odom, options.keyframeS ?? 0.25, clock);
  // Nothing downstream reads the interval covariances (the alignment weights rows robustly), so skip them.
  const batch = preintegrateBatch(imu, kf.tImu, bg0, new Float64Array(3), noise, undefined, false);
  lap('preintegration');
  const prior = Float64Array.from(manifest.extrinsics.imu_T_odom.rotation_wxyz);
  const rot = estimateRotation(batch, kf, prior, { spanS: options.rotationSpanS ?? 0.5, windowS, windowOverlap: overlap });
  lap('rotation');
  if (!rot.ok) return skip(rot.reason);
  const ext = extrinsicError(prior, rot.imuQOdom, rot.rotationCov);
  const gyroBias: Vec3Result = {
    value: [rot.gyroBiasRadS[0]!, rot.gyroBiasRadS[1]!, rot.gyroBiasRadS[2]!],
    sigma: [rot.gyroBiasSigmaRadS[0]!, rot.gyroBiasSigmaRadS[1]!, rot.gyroBiasSigmaRadS[2]!], unit: 'rad/s',
  };
  const dbg = Float64Array.from(rot.gyroBiasRadS, (v, i) => v - bg0[i]!);
  const rows = buildAlignmentRows(batch, kf, rot.imuQOdom, manifest.extrinsics.imu_T_odom.translation, dbg, options.alignmentStride ?? 4);
  const gs = estimateGravityScale(rows, manifest.odometry.world_gravity_aligned, { windowS, windowOverlap: overlap, gravityMS2: G });
  lap('gravityScale');
  const extrinsic = {
    imuQOdom: [rot.imuQOdom[0]!, rot.imuQOdom[1]!, rot.imuQOdom[2]!, rot.imuQOdom[3]!] as [number, number, number, number],
    sigmaDeg: Array.from(rot.rotationSigmaRad, (v) => (v * 180) / Math.PI) as [number, number, number],
  };
  if (!gs.ok) return { ...skip(gs.reason), extrinsicError: ext.estimate, extrinsicObservedDeg: ext.observedDeg, gyroBias, rotationSeries: rot.residualWindows, extrinsic };
  const runScale = gs.runScale.value ?? 1;
  const drift = estimateScaleDrift(gs.scale, gs.distance.map((d) => d * runScale), windowS, overlap, gs.rawScale, rows, gs.gravity, gs.rowBias);
  const poseJumps = findPoseJumps(rows, gs.rowScale, runScale, gs.gravity, gs.rowBias);
  lap('scaleDrift');
  return {
    extrinsicError: ext.estimate, extrinsicObservedDeg: ext.observedDeg, gyroBias, alignmentBias: gs.accelBias,
    tilt: gs.gravityTiltDeg, scale: gs.runScale as ScalarResult, drift: drift.driftPctPer100m,
    scaleSeries: gs.scale, tiltSeries: gs.tiltDeg, rotationSeries: rot.residualWindows, residualSeries: gs.residual,
    extrinsic, steps: drift.steps, poseJumps,
  };
}

