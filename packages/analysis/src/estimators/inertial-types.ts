/**
 * Result of `analyzeInertial`: plain typed data for the report builder.
 *
 * Clocks and frames: every time is IMU-clock epoch seconds (odometry stamps are mapped with the estimated clock
 * model). Rotations are Hamilton quaternions w-first. `imuQOdom` is the rotation of `imu_T_odom` (odometry body
 * frame into the IMU frame), as in the manifest.
 *
 * `estimates` uses the key names and units of the report's `Estimates` (ScalarEstimate/Vec3Estimate shapes), so it
 * maps one-to-one. `series` are per-window values (NaN = no value; `reasons[i]` says why). `findings` are measured
 * anomalies with their interval and value in the unit of the matching policy threshold; they carry no severity.
 */
import type { ClockModel } from './keyframes.ts';
import type { SaturationRun, StreamTiming } from './integrity.ts';
import type { ScaleStep } from './scale-drift.ts';
import type { UnitsCheck } from './units.ts';
import type { InertialFinding, ScalarResult, TimeInterval, Vec3Result, WindowSeries } from './types.ts';

export interface InertialEstimates {
  /** s, odometry − IMU stamp of the same instant, at the run centre. */
  time_offset_s: ScalarResult;
  /** ppm, d(offset)/dt. */
  clock_skew_ppm: ScalarResult;
  /** deg, angle between the manifest and the estimated imu_T_odom rotation. */
  extrinsic_rotation_error_deg: ScalarResult;
  gyro_bias_rad_s: Vec3Result;
  accel_bias_m_s2: Vec3Result;
  /** deg, estimated gravity vs odometry world −z (null when the world is not claimed gravity-aligned). */
  gravity_tilt_deg: ScalarResult;
  /** m/s², the normal-gravity magnitude the alignment held fixed (sigma null: a model value, not a measurement). */
  gravity_magnitude_m_s2: ScalarResult;
  /** metres per odometry unit (run median of observable windows). */
  scale: ScalarResult;
  /** % of scale per 100 m travelled (Theil–Sen), sigma from the 95 % CI. */
  scale_drift_pct_per_100m: ScalarResult;
  /** rad/s/√Hz */
  gyro_noise_density: ScalarResult;
  /** m/s²/√Hz */
  accel_noise_density: ScalarResult;
}

export interface InertialSeries {
  /** Scale per window (metres per odometry unit). */
  scale: WindowSeries;
  /** deg */
  gravity_tilt_deg: WindowSeries;
  /** deg/s, RMS of gyro vs odometry rotation residuals after bias/extrinsic correction. */
  rotation_residual_deg_s: WindowSeries;
  /** s, per time-offset window (default 60 s, non-overlapping). */
  time_offset_s: WindowSeries;
  /** m/s, alignment residual RMS per window. */
  alignment_residual_m_s: WindowSeries;
}

export interface InertialIntegrity {
  imu: StreamTiming;
  odometry: StreamTiming;
  saturation: SaturationRun[];
  stationary: TimeInterval[];
  units: UnitsCheck;
}

export interface InertialAnalysis {
  integrity: InertialIntegrity;
  estimates: InertialEstimates;
  series: InertialSeries;
  /** Estimated imu_T_odom rotation (w-first) and its 1-sigma per body axis (deg), or null. */
  extrinsic: { imuQOdom: [number, number, number, number]; sigmaDeg: [number, number, number] } | null;
  clock: ClockModel;
  scaleSteps: ScaleStep[];
  findings: InertialFinding[];
  /** Wall-clock milliseconds per stage (diagnostics). */
  timingsMs: Record<string, number>;
}
