import { z } from 'zod';
import { FlagKind, Severity, Verdict } from './vocabulary.ts';

export const REPORT_SCHEMA = 'plumbline-report/1';

/**
 * A scalar estimate: a value with its 1-sigma uncertainty, or `value: null` with the reason the data
 * could not support it (e.g. "unobservable: no acceleration excitation").
 */
export const ScalarEstimate = z.union([
  z.object({ value: z.number(), sigma: z.number().nonnegative().nullable(), unit: z.string() }).strict(),
  z.object({ value: z.null(), sigma: z.null(), unit: z.string(), reason: z.string() }).strict(),
]);
export type ScalarEstimate = z.infer<typeof ScalarEstimate>;

export const Vec3Estimate = z.union([
  z
    .object({
      value: z.tuple([z.number(), z.number(), z.number()]),
      sigma: z.tuple([z.number(), z.number(), z.number()]).nullable(),
      unit: z.string(),
    })
    .strict(),
  z.object({ value: z.null(), sigma: z.null(), unit: z.string(), reason: z.string() }).strict(),
]);
export type Vec3Estimate = z.infer<typeof Vec3Estimate>;

/**
 * Run-level estimates. Conventions:
 * - `time_offset_s` = odometry timestamp minus IMU timestamp of the same physical instant.
 * - `clock_skew_ppm` = rate of change of that offset, parts per million.
 * - `extrinsic_rotation_error_deg` = angle of the rotation between the manifest extrinsic and the estimated one.
 * - `gravity_tilt_deg` = angle between the estimated gravity direction and the odometry world −z axis.
 * - `scale` = the factor that turns odometry distances into metres.
 * - `scale_drift_pct_per_100m` = robust trend of scale, % per 100 m travelled.
 * - `gnss_rmse_m` = horizontal RMS of odometry against good GNSS fixes after alignment.
 * - `loop_drift_pct` = translation closure error of consistent loops, % of path length.
 */
export const Estimates = z
  .object({
    time_offset_s: ScalarEstimate,
    clock_skew_ppm: ScalarEstimate,
    extrinsic_rotation_error_deg: ScalarEstimate,
    gyro_bias_rad_s: Vec3Estimate,
    accel_bias_m_s2: Vec3Estimate,
    gravity_tilt_deg: ScalarEstimate,
    gravity_magnitude_m_s2: ScalarEstimate,
    scale: ScalarEstimate,
    scale_drift_pct_per_100m: ScalarEstimate,
    gyro_noise_density: ScalarEstimate,
    accel_noise_density: ScalarEstimate,
    gnss_rmse_m: ScalarEstimate,
    loop_drift_pct: ScalarEstimate,
    loop_drift_deg_per_m: ScalarEstimate,
  })
  .catchall(z.union([ScalarEstimate, Vec3Estimate]));
export type Estimates = z.infer<typeof Estimates>;

export const Interval = z.object({ t_start: z.number(), t_end: z.number() }).strict();
export type Interval = z.infer<typeof Interval>;

export const StreamIntegrity = z
  .object({
    file: z.string(),
    samples: z.number().int().nonnegative(),
    bad_lines: z.number().int().nonnegative(),
    nominal_rate_hz: z.number().nullable(),
    measured_rate_hz: z.number().nullable(),
    t_first: z.number().nullable(),
    t_last: z.number().nullable(),
    gaps: z.array(Interval),
    duplicate_timestamps: z.number().int().nonnegative(),
    non_monotonic_timestamps: z.number().int().nonnegative(),
    non_finite_values: z.number().int().nonnegative(),
  })
  .catchall(z.unknown());
export type StreamIntegrity = z.infer<typeof StreamIntegrity>;

export const Integrity = z
  .object({
    imu: StreamIntegrity,
    odometry: StreamIntegrity,
    gnss: StreamIntegrity.nullable(),
    loops: StreamIntegrity.nullable(),
    saturation: z.array(Interval.extend({ axis: z.string(), samples: z.number().int() })),
    stationary: z.array(Interval),
    units: z
      .object({
        /** |specific force| at rest divided by local normal gravity; ≈1 when accel is in m/s², ≈0.102 when in g. */
        accel_rest_ratio: z.number().nullable(),
        /** gyro rate / odometry rotation rate; ≈1 when gyro is in rad/s, ≈57.3 when written in deg/s. */
        gyro_odometry_rate_ratio: z.number().nullable(),
      })
      .strict(),
  })
  .catchall(z.unknown());
export type Integrity = z.infer<typeof Integrity>;

export const Flag = z
  .object({
    /** Stable within a report: `${kind}-${n}` in time order. */
    id: z.string(),
    kind: FlagKind,
    severity: Severity,
    t_start: z.number(),
    t_end: z.number(),
    /** Distance travelled along the odometry path at t_start and t_end, metres. */
    distance_start_m: z.number(),
    distance_end_m: z.number(),
    value: z.number().nullable(),
    threshold: z.number().nullable(),
    unit: z.string(),
    /** What it means for the map. */
    message: z.string(),
    /** What to check on the robot. */
    check: z.string(),
  })
  .strict();
export type Flag = z.infer<typeof Flag>;

/** Adjacent flagged windows merged into one stretch of the run. */
export const Segment = z
  .object({
    id: z.string(),
    t_start: z.number(),
    t_end: z.number(),
    distance_start_m: z.number(),
    distance_end_m: z.number(),
    severity: Severity,
    kinds: z.array(FlagKind),
    flag_ids: z.array(z.string()),
  })
  .strict();
export type Segment = z.infer<typeof Segment>;

export const LoopSource = z.enum(['robot', 'dock', 'gnss-revisit']);
export type LoopSource = z.infer<typeof LoopSource>;

export const Loop = z
  .object({
    id: z.string(),
    source: LoopSource,
    t_a: z.number(),
    t_b: z.number(),
    path_length_m: z.number(),
    translation_error_m: z.number(),
    translation_error_pct: z.number(),
    rotation_error_deg: z.number(),
    rotation_error_deg_per_m: z.number(),
    chi2: z.number().nullable(),
    dof: z.number().int(),
    chi2_threshold: z.number().nullable(),
    /** false: excluded from the pose graph as a false closure. */
    accepted: z.boolean(),
  })
  .strict();
export type Loop = z.infer<typeof Loop>;

/** A downsampled series for plots: `t` in run seconds (since the first odometry pose), `v` the values (null = no value). */
export const Series = z
  .object({
    unit: z.string(),
    t: z.array(z.number()),
    v: z.array(z.number().nullable()),
    /** Optional 1-sigma band. */
    sigma: z.array(z.number().nullable()).optional(),
  })
  .strict();
export type Series = z.infer<typeof Series>;

/** A downsampled top-down path: `t` in run seconds, x/y/z in metres (odometry world or ENU as labelled). */
export const Path = z
  .object({
    frame: z.string(),
    t: z.array(z.number()),
    x: z.array(z.number()),
    y: z.array(z.number()),
    z: z.array(z.number()),
  })
  .strict();
export type Path = z.infer<typeof Path>;

export const ReportSeries = z
  .object({
    trajectory: Path,
    repaired_trajectory: Path.nullable(),
    gnss_fixes: Path.extend({ fix: z.array(z.number().int()) }).nullable(),
  })
  .catchall(z.union([Series, Path, z.null()]));
export type ReportSeries = z.infer<typeof ReportSeries>;

export const Corrections = z
  .object({
    scale_applied: z.number().nullable(),
    gravity_rotation_deg: z.number().nullable(),
    time_offset_applied_s: z.number().nullable(),
    loops_used: z.array(z.string()),
    loops_excluded: z.array(z.string()),
    notes: z.array(z.string()),
  })
  .catchall(z.unknown());
export type Corrections = z.infer<typeof Corrections>;

export const RunInfo = z
  .object({
    robot_id: z.string(),
    run_id: z.string(),
    site: z.string(),
    started_at: z.string(),
    /** Epoch seconds of the first odometry pose; series times are relative to it. */
    t0: z.number(),
    duration_s: z.number(),
    distance_m: z.number(),
  })
  .strict();
export type RunInfo = z.infer<typeof RunInfo>;

/** `plumbline-report/1`: the analysis result read by the service, the dashboard and integrators. */
export const Report = z
  .object({
    schema: z.literal(REPORT_SCHEMA),
    analysis_version: z.string(),
    policy_hash: z.string(),
    run: RunInfo,
    score: z.number().min(0).max(100),
    verdict: Verdict,
    estimates: Estimates,
    integrity: Integrity,
    flags: z.array(Flag),
    segments: z.array(Segment),
    loops: z.array(Loop),
    corrections: Corrections,
    series: ReportSeries,
  })
  .strict();
export type Report = z.infer<typeof Report>;

/**
 * JSON Schema (draft 2020-12, generated by zod 4) of `plumbline-report/1`; committed as docs/report-schema.json
 * (regenerate with `node --import tsx packages/analysis/scripts/write-report-schema.ts`).
 */
export function reportJsonSchema(): string {
  const schema = z.toJSONSchema(Report, { target: 'draft-2020-12', unrepresentable: 'any' });
  return `${JSON.stringify({ $id: 'https://plumbline.invalid/schemas/plumbline-report-1.json', title: 'plumbline-report/1', ...schema }, null, 2)}\n`;
}
