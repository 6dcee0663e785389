/** Test fixtures for store tests: a contract-valid report and run inputs in the demo scenario. */
import { Report, type Flag, type FlagKind, type Severity, type Verdict } from '@plumbline/contracts';
import type { RunCreate } from '../types.ts';

const none = (unit: string) => ({ value: null, sigma: null, unit, reason: 'not estimated in this fixture' });
const noneVec = (unit: string) => ({ value: null, sigma: null, unit, reason: 'not estimated in this fixture' });
const stream = (file: string) => ({
  file,
  samples: 0,
  bad_lines: 0,
  nominal_rate_hz: null,
  measured_rate_hz: null,
  t_first: null,
  t_last: null,
  gaps: [],
  duplicate_timestamps: 0,
  non_monotonic_timestamps: 0,
  non_finite_values: 0,
});

export function sha(n: number): string {
  return n.toString(16).padStart(64, '0');
}

export function runInput(n: number, over: Partial<RunCreate> = {}): RunCreate {
  return {
    robot_id: 'kestrel-01',
    run_id: `shift-${n}`,
    site: 'harbourside-depot',
    started_at: '2026-11-30T06:00:00Z',
    sha256: sha(n),
    size_bytes: 1000 + n,
    ...over,
  };
}

export function flag(kind: FlagKind, severity: Severity, n = 1, t = 10): Flag {
  return {
    id: `${kind}-${n}`,
    kind,
    severity,
    t_start: t,
    t_end: t + 5,
    distance_start_m: t,
    distance_end_m: t + 5,
    value: 1.5,
    threshold: 1,
    unit: 'm',
    message: 'fixture flag',
    check: 'fixture check',
  };
}

/** A report that passes the contract schema (checked with Report.parse so the fixture cannot drift from it). */
export function report(opts: { score: number; verdict: Verdict; flags?: Flag[]; version?: string }): Report {
  const flags = opts.flags ?? [];
  return Report.parse({
    schema: 'plumbline-report/1',
    analysis_version: opts.version ?? 'test-1',
    policy_hash: 'p'.repeat(16),
    run: { robot_id: 'kestrel-01', run_id: 'shift-1', site: 'harbourside-depot', started_at: '2026-11-30T06:00:00Z', t0: 0, duration_s: 600, distance_m: 420 },
    score: opts.score,
    verdict: opts.verdict,
    estimates: {
      time_offset_s: none('s'),
      clock_skew_ppm: none('ppm'),
      extrinsic_rotation_error_deg: none('deg'),
      gyro_bias_rad_s: noneVec('rad/s'),
      accel_bias_m_s2: noneVec('m/s^2'),
      gravity_tilt_deg: none('deg'),
      gravity_magnitude_m_s2: none('m/s^2'),
      scale: none('1'),
      scale_drift_pct_per_100m: none('%/100m'),
      gyro_noise_density: none('rad/s/sqrt(Hz)'),
      accel_noise_density: none('m/s^2/sqrt(Hz)'),
      gnss_rmse_m: none('m'),
      loop_drift_pct: none('%'),
      loop_drift_deg_per_m: none('deg/m'),
    },
    integrity: {
      imu: stream('imu.csv'),
      odometry: stream('odometry.csv'),
      gnss: null,
      loops: null,
      saturation: [],
      stationary: [],
      units: { accel_rest_ratio: null, gyro_odometry_rate_ratio: null },
    },
    flags,
    segments: flags.map((f, i) => ({
      id: `seg-${i + 1}`,
      t_start: f.t_start,
      t_end: f.t_end,
      distance_start_m: f.distance_start_m,
      distance_end_m: f.distance_end_m,
      severity: f.severity,
      kinds: [f.kind],
      flag_ids: [f.id],
    })),
    loops: [],
    corrections: { scale_applied: null, gravity_rotation_deg: null, time_offset_applied_s: null, loops_used: [], loops_excluded: [], notes: [] },
    series: { trajectory: { frame: 'odom', t: [], x: [], y: [], z: [] }, repaired_trajectory: null, gnss_fixes: null },
  });
}
