import { z } from 'zod';
import { FlagDisposition, FlagKind, RunDecision, Severity, Verdict } from './vocabulary.ts';
import { Interval } from './report.ts';
import { Policy } from './policy.ts';

/**
 * Calibration quantities followed across a robot's runs. Each is read from a run's report estimates:
 * time offset (ms), clock skew (ppm), camera–IMU (odometry–IMU) rotation error (deg), |gyro bias| (rad/s),
 * |accelerometer bias| (m/s²), gravity magnitude at rest (m/s²), gyro noise density (rad/s/√Hz, Allan),
 * scale error ((scale − 1)·100 %), loop drift (% of path).
 */
export const CalibrationMetric = z.enum([
  'time_offset_ms',
  'clock_skew_ppm',
  'extrinsic_rotation_deg',
  'gyro_bias_rad_s',
  'accel_bias_m_s2',
  'gravity_magnitude_m_s2',
  'gyro_noise_density',
  'scale_error_pct',
  'loop_drift_pct',
]);
export type CalibrationMetric = z.infer<typeof CalibrationMetric>;

/** One metric over a robot's runs, oldest first; `v` null where the run could not support the estimate. */
export const CalibrationSeries = z
  .object({
    metric: CalibrationMetric,
    unit: z.string(),
    run: z.array(z.string()),
    started_at: z.array(z.string().nullable()),
    v: z.array(z.number().nullable()),
    sigma: z.array(z.number().nullable()),
  })
  .strict();
export type CalibrationSeries = z.infer<typeof CalibrationSeries>;

/** A robot-level maintenance finding from drift detection over its runs. */
export const MaintenanceFinding = z
  .object({
    id: z.string(),
    robot_id: z.string(),
    metric: CalibrationMetric,
    severity: Severity,
    /** `trend`: robust slope significant; `step`: CUSUM change point. */
    method: z.enum(['trend', 'step']),
    /** Change from the level before the onset to the recent level, in `unit`. */
    change: z.number(),
    unit: z.string(),
    /** Runs from the onset to the latest run, inclusive. */
    runs: z.number().int(),
    since_run: z.string(),
    since: z.string().nullable(),
    latest_run: z.string(),
    /** Theil–Sen slope per run and its 95 % interval (Sen 1968), over the runs since the onset. */
    slope_per_run: z.number().nullable(),
    slope_low: z.number().nullable(),
    slope_high: z.number().nullable(),
    message: z.string(),
    action: z.string(),
    status: z.enum(['open', 'resolved']),
    detected_at: z.string(),
    updated_at: z.string(),
  })
  .strict();
export type MaintenanceFinding = z.infer<typeof MaintenanceFinding>;

export const RobotCalibration = z
  .object({ robot_id: z.string(), series: z.array(CalibrationSeries), findings: z.array(MaintenanceFinding) })
  .strict();
export type RobotCalibration = z.infer<typeof RobotCalibration>;

/** How leads disposed of one flag kind (optionally at one site). `precision` = upheld / (upheld + dismissed). */
export const FeedbackCell = z
  .object({
    kind: FlagKind,
    site: z.string().nullable(),
    upheld: z.number().int(),
    dismissed: z.number().int(),
    rerun_needed: z.number().int(),
    precision: z.number().nullable(),
  })
  .strict();
export type FeedbackCell = z.infer<typeof FeedbackCell>;

/** A threshold for one flag kind that would have kept the dismissed share under `target_dismissed_rate`. */
export const ThresholdSuggestion = z
  .object({
    kind: FlagKind,
    ok: z.boolean(),
    reason: z.string().nullable(),
    current_warn: z.number().nullable(),
    suggested_warn: z.number().nullable(),
    unit: z.string(),
    target_dismissed_rate: z.number(),
    /** Evidence at the suggested threshold: reviewed flags at or above it, by disposition. */
    upheld_kept: z.number().int(),
    upheld_total: z.number().int(),
    dismissed_kept: z.number().int(),
    dismissed_total: z.number().int(),
  })
  .strict();
export type ThresholdSuggestion = z.infer<typeof ThresholdSuggestion>;

export const FeedbackReport = z
  .object({ by_kind: z.array(FeedbackCell), by_kind_site: z.array(FeedbackCell), suggestions: z.array(ThresholdSuggestion) })
  .strict();
export type FeedbackReport = z.infer<typeof FeedbackReport>;

/** One reviewed flag as the feedback statistics read it. */
export interface ReviewedFlag {
  kind: FlagKind;
  site: string;
  value: number | null;
  disposition: FlagDisposition;
}

export const StoredPolicy = z
  .object({ name: z.string(), version: z.string(), hash: z.string(), created_at: z.string(), created_by: z.string(), policy: Policy })
  .strict();
export type StoredPolicy = z.infer<typeof StoredPolicy>;

/** A run whose verdict moved between its previous and its current report. */
export const VerdictChange = z
  .object({
    run: z.string(),
    robot_id: z.string(),
    run_id: z.string(),
    before: z.object({ verdict: Verdict, score: z.number(), policy_hash: z.string() }).strict(),
    after: z.object({ verdict: Verdict, score: z.number(), policy_hash: z.string() }).strict(),
  })
  .strict();
export type VerdictChange = z.infer<typeof VerdictChange>;

export const MergeGateRequest = z
  .object({
    runs: z.array(z.string().min(1)).min(1).max(500),
    /** Stored policy name (latest version, or `name@version`); absent = the thresholds the reports were made with. */
    policy: z.string().max(128).optional(),
  })
  .strict();
export type MergeGateRequest = z.infer<typeof MergeGateRequest>;

export const MergeState = z.enum(['ready', 'ready-trimmed', 'needs-review', 'not-ready', 'not-analysed']);
export type MergeState = z.infer<typeof MergeState>;

export const CutSegment = z
  .object({ segment_id: z.string(), t_start: z.number(), t_end: z.number(), severity: Severity, kinds: z.array(FlagKind), why: z.string() })
  .strict();
export type CutSegment = z.infer<typeof CutSegment>;

export const MergeGateAnswer = z
  .object({
    run: z.string(),
    ready: z.boolean(),
    state: MergeState,
    verdict: Verdict.nullable(),
    decision: RunDecision.nullable(),
    reasons: z.array(z.string()),
    /** Segments to cut out, run seconds (since the first odometry pose). */
    cut: z.array(CutSegment),
    /** Time ranges to keep, run seconds; empty when not ready. */
    keep: z.array(Interval),
  })
  .strict();
export type MergeGateAnswer = z.infer<typeof MergeGateAnswer>;

export const MergeGateResponse = z
  .object({ policy: z.string().nullable(), all_ready: z.boolean(), runs: z.array(MergeGateAnswer) })
  .strict();
export type MergeGateResponse = z.infer<typeof MergeGateResponse>;
