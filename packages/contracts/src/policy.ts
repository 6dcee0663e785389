import { z } from 'zod';
import { FLAG_KINDS, type FlagKind } from './vocabulary.ts';

/**
 * Severity thresholds of one flag kind. A measured value at or above `warn` is a warning, at or above
 * `critical` is critical; below `warn` it is info. `null` means "never escalates past info" (e.g. unobservable).
 * Values are compared as magnitudes (|value|) in `unit`.
 */
export const FlagThreshold = z
  .object({
    warn: z.number().nonnegative().nullable(),
    critical: z.number().nonnegative().nullable(),
    unit: z.string(),
  })
  .strict()
  .refine((t) => t.warn === null || t.critical === null || t.critical >= t.warn, {
    message: 'critical must be at or above warn',
  });
export type FlagThreshold = z.infer<typeof FlagThreshold>;

const flagShape = Object.fromEntries(FLAG_KINDS.map((k) => [k, FlagThreshold])) as Record<FlagKind, typeof FlagThreshold>;

/** Named numeric knobs of the analysis that are a matter of policy rather than of physics. */
export const PolicyKnobs = z
  .object({
    /** Lowest NMEA 0183 GGA quality code accepted as a good fix (1 = GPS, 2 = DGPS, 4 = RTK fixed, 5 = RTK float). */
    gnss_min_fix_quality: z.number().int().min(1).max(9),
    /** Largest 1-sigma horizontal accuracy accepted, metres (fixes without an accuracy pass this test). */
    gnss_max_hacc_m: z.number().positive(),
    /** Largest horizontal dilution of precision accepted (fixes without HDOP pass this test). */
    gnss_max_hdop: z.number().positive(),
    /** A stretch without a good fix at least this long is a GNSS outage, seconds. */
    gnss_outage_s: z.number().positive(),
    /** Length of the analysis windows, seconds. */
    window_s: z.number().positive(),
    /** Overlap of consecutive windows, fraction of window_s in [0, 0.9]. */
    window_overlap: z.number().min(0).max(0.9),
    /** Fraction of unparseable lines in a stream above which the stream is reported as damaged. */
    bad_line_fraction: z.number().min(0).max(1),
    /** Dock-return loop: 1-sigma translation between first and last stationary poses, metres. */
    dock_sigma_m: z.number().positive(),
    /** Dock-return loop: 1-sigma rotation, degrees. */
    dock_sigma_deg: z.number().positive(),
    /** Tail probability of the chi-square gate on loop edges (0.05 = the 95 % point). */
    loop_gate_alpha: z.number().gt(0).lt(1),
    /** GNSS revisit loops: two good fixes at least this far apart in time … seconds. */
    revisit_min_gap_s: z.number().positive(),
    /** … and at most this far apart in ENU, metres. */
    revisit_max_distance_m: z.number().positive(),
    /** Score: weight of the fraction of distance flagged at warn severity. */
    score_weight_warn: z.number().min(0).max(1),
    /** Score: weight of the fraction of distance flagged at critical severity. */
    score_weight_critical: z.number().min(0).max(1),
    /** Score: points removed for each flag kind whose worst flag is critical. */
    score_penalty_critical: z.number().min(0).max(100),
    /** Score: points removed for each flag kind whose worst flag is a warning. */
    score_penalty_warn: z.number().min(0).max(100),
  })
  .strict();
export type PolicyKnobs = z.infer<typeof PolicyKnobs>;

export const PolicyThresholds = z.object({ ...flagShape, ...PolicyKnobs.shape }).strict();
export type PolicyThresholds = z.infer<typeof PolicyThresholds>;

const partialFlag = z
  .object({ warn: z.number().nonnegative().nullable(), critical: z.number().nonnegative().nullable(), unit: z.string() })
  .partial()
  .strict();
const partialFlagShape = Object.fromEntries(FLAG_KINDS.map((k) => [k, partialFlag.optional()])) as Record<
  FlagKind,
  z.ZodOptional<typeof partialFlag>
>;
export const PartialThresholds = z.object({ ...partialFlagShape, ...PolicyKnobs.partial().shape }).strict();
export type PartialThresholds = z.infer<typeof PartialThresholds>;

/** An override applies when every selector it names matches (a missing selector matches anything). */
export const PolicyOverride = z
  .object({
    site: z.string().optional(),
    robot_model: z.string().optional(),
    thresholds: PartialThresholds,
  })
  .strict();
export type PolicyOverride = z.infer<typeof PolicyOverride>;

/** Triage policy: thresholds per flag kind, analysis knobs, and overrides per site and robot model. */
export const Policy = z
  .object({
    name: z.string().min(1),
    version: z.string().min(1),
    thresholds: PolicyThresholds,
    overrides: z.array(PolicyOverride).default([]),
  })
  .strict();
export type Policy = z.infer<typeof Policy>;

/**
 * Defaults. Sources: "common practice" means a fact of the trade without a single published source
 * (see docs/policy.md for the reasoning behind each number).
 */
export const DEFAULT_POLICY: Policy = Object.freeze({
  name: 'default',
  version: '1',
  thresholds: {
    // A gap longer than a few samples breaks preintegration; half a second loses the motion entirely. Common practice.
    'imu-gap': { warn: 0.05, critical: 0.5, unit: 's' },
    // Clipped samples make the integrated motion wrong; value = clipped samples in the interval. Common practice.
    'imu-saturation': { warn: 1, critical: 20, unit: 'samples' },
    // Odometry that stops publishing leaves the map without poses; value = gap length. Common practice.
    'odometry-gap': { warn: 0.5, critical: 2, unit: 's' },
    // Step in position beyond what the IMU allows between consecutive poses; value = unexplained step. Common practice.
    'pose-jump': { warn: 0.2, critical: 1, unit: 'm' },
    // value = |ratio − 1| of accel-at-rest/gravity or gyro/odometry rate; deg/s vs rad/s gives 56, g vs m/s² gives 0.9.
    units: { warn: 0.2, critical: 0.5, unit: 'ratio' },
    // Unsynchronised clocks are a few ms to a few tens of ms; > ~50 ms breaks most fusion. From 10 ms the lag is
    // visible in the map (1.8° of heading at 180 °/s, 1 cm at 1 m/s), so it is worth a warning. Common practice.
    'time-offset': { warn: 10, critical: 50, unit: 'ms' },
    // RMS difference between gyro rate and odometry rotation rate in a window. Common practice.
    'rotation-mismatch': { warn: 2, critical: 5, unit: 'deg/s' },
    // Angle between the manifest extrinsic rotation and the estimated one. Common practice.
    'extrinsic-rotation': { warn: 2, critical: 5, unit: 'deg' },
    // Angle between estimated gravity and odometry world −z (gravity-aligned odometry). Common practice.
    'gravity-tilt': { warn: 1, critical: 3, unit: 'deg' },
    // Deviation of the window scale from the run scale; VO drift 0.5–2 % is fine, > 3 % suspect. Common practice.
    'scale-drift': { warn: 3, critical: 6, unit: '%' },
    // chi2 of the loop edge divided by its gate (95 % point); >= 1 means the closure is excluded. Common practice.
    'loop-mismatch': { warn: 1, critical: 10, unit: 'chi2/gate' },
    // Translation closure error of a consistent loop, % of path; 0.5–2 % fine, > 3 % suspect. Common practice.
    'loop-drift': { warn: 2, critical: 3, unit: '%' },
    // Horizontal disagreement between aligned odometry and good fixes. Common practice.
    'gnss-divergence': { warn: 2, critical: 5, unit: 'm' },
    // Not a fault: a quantity the data cannot support (e.g. monocular scale at constant velocity). Never escalates.
    unobservable: { warn: null, critical: null, unit: 's' },
    gnss_min_fix_quality: 1,
    gnss_max_hacc_m: 3,
    gnss_max_hdop: 2.5,
    gnss_outage_s: 5,
    window_s: 10,
    window_overlap: 0.5,
    bad_line_fraction: 0.001,
    dock_sigma_m: 0.1,
    dock_sigma_deg: 2,
    loop_gate_alpha: 0.05,
    revisit_min_gap_s: 60,
    revisit_max_distance_m: 1,
    score_weight_warn: 0.5,
    score_weight_critical: 1,
    score_penalty_critical: 25,
    score_penalty_warn: 5,
  },
  overrides: [],
});

function applyPartial(base: PolicyThresholds, partial: PartialThresholds): PolicyThresholds {
  const out: Record<string, unknown> = { ...base };
  for (const [key, value] of Object.entries(partial)) {
    if (value === undefined) continue;
    const prev = out[key];
    out[key] = typeof value === 'object' && value !== null && typeof prev === 'object' ? { ...prev, ...value } : value;
  }
  return out as PolicyThresholds;
}

/**
 * The thresholds that apply to a run: the base thresholds with every matching override applied in list order
 * (later overrides win). The result has no overrides left; its name records what was applied.
 */
export function resolvePolicy(policy: Policy, site: string | null, robotModel: string | null): Policy {
  let thresholds = policy.thresholds;
  const applied: number[] = [];
  policy.overrides.forEach((o, i) => {
    if (o.site !== undefined && o.site !== site) return;
    if (o.robot_model !== undefined && o.robot_model !== robotModel) return;
    thresholds = applyPartial(thresholds, o.thresholds);
    applied.push(i);
  });
  const name = applied.length === 0 ? policy.name : `${policy.name}+overrides[${applied.join(',')}]`;
  return { name, version: policy.version, thresholds, overrides: [] };
}

/**
 * Canonical JSON: object keys sorted by UTF-16 code unit order, no whitespace, numbers in the shortest
 * round-trip form of ECMAScript `Number.prototype.toString`, `undefined` members dropped. Non-finite numbers are
 * a programmer error (JSON cannot hold them).
 */
export function canonicalJson(value: unknown): string {
  if (value === null) return 'null';
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new RangeError(`canonicalJson: non-finite number ${value}`);
    return JSON.stringify(value);
  }
  if (typeof value === 'string' || typeof value === 'boolean') return JSON.stringify(value);
  if (Array.isArray(value)) return `[${value.map((v) => (v === undefined ? 'null' : canonicalJson(v))).join(',')}]`;
  if (typeof value === 'object') {
    const entries = Object.entries(value as Record<string, unknown>)
      .filter(([, v]) => v !== undefined)
      .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
    return `{${entries.map(([k, v]) => `${JSON.stringify(k)}:${canonicalJson(v)}`).join(',')}}`;
  }
  throw new RangeError(`canonicalJson: unsupported type ${typeof value}`);
}

/** Severity of a measured value under a threshold (magnitude compared). */
export function severityOf(value: number, t: FlagThreshold): 'info' | 'warn' | 'critical' {
  const m = Math.abs(value);
  if (t.critical !== null && m >= t.critical) return 'critical';
  if (t.warn !== null && m >= t.warn) return 'warn';
  return 'info';
}
