import { z } from 'zod';

/** Every kind of finding the analysis can raise. The set is part of the report contract. */
export const FlagKind = z.enum([
  'imu-gap',
  'imu-saturation',
  'odometry-gap',
  'pose-jump',
  'units',
  'time-offset',
  'rotation-mismatch',
  'extrinsic-rotation',
  'gravity-tilt',
  'scale-drift',
  'loop-mismatch',
  'loop-drift',
  'gnss-divergence',
  'unobservable',
]);
export type FlagKind = z.infer<typeof FlagKind>;
export const FLAG_KINDS: readonly FlagKind[] = FlagKind.options;

export const Severity = z.enum(['info', 'warn', 'critical']);
export type Severity = z.infer<typeof Severity>;

/**
 * Run-level verdict.
 * - `sound`: nothing above info; the run can be merged on the analysis alone.
 * - `doubtful`: warnings; a lead should look before the run is merged.
 * - `unfit`: critical findings; do not merge without cutting or re-running.
 */
export const Verdict = z.enum(['sound', 'doubtful', 'unfit']);
export type Verdict = z.infer<typeof Verdict>;

export const RunStatus = z.enum(['received', 'queued', 'analysing', 'done', 'failed', 'rejected']);
export type RunStatus = z.infer<typeof RunStatus>;

/** A lead's decision on a whole run. */
export const RunDecision = z.enum([
  'accept', // merge the run as it is
  'accept-trimmed', // merge only the time ranges outside cut segments
  'reject', // never merge this run
  'rerun', // the route must be driven again
]);
export type RunDecision = z.infer<typeof RunDecision>;

/** A lead's disposition of one flag. */
export const FlagDisposition = z.enum([
  'upheld', // the flag is a real problem
  'dismissed', // false alarm
  'rerun-needed', // cannot tell from this run; drive it again
]);
export type FlagDisposition = z.infer<typeof FlagDisposition>;

export const Role = z.enum(['robot', 'lead', 'integrator', 'admin']);
export type Role = z.infer<typeof Role>;

export const OdometrySource = z.enum(['visual', 'visual-inertial', 'lidar', 'wheel']);
export type OdometrySource = z.infer<typeof OdometrySource>;

export const WebhookEvent = z.enum(['run.analysed', 'run.reviewed', 'run.merge-ready', 'robot.maintenance']);
export type WebhookEvent = z.infer<typeof WebhookEvent>;
