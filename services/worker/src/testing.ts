/** Test helpers of the worker. */
import { Report } from '@plumbline/contracts';

const none = (unit: string) => ({ value: null, sigma: null, unit, reason: 'not computed in this test' });

/**
 * A schema-valid report with a chosen score, for tests of the run life cycle around the analysis (status changes,
 * exactly-once recording, retries); it is not an analysis result.
 */
export function scriptedReport(score: number): Report {
  const stream = (file: string) => ({
    file, samples: 10, bad_lines: 0, nominal_rate_hz: null, measured_rate_hz: null, t_first: 0, t_last: 1, gaps: [],
    duplicate_timestamps: 0, non_monotonic_timestamps: 0, non_finite_values: 0,
  });
  const scalarKeys = ['time_offset_s', 'clock_skew_ppm', 'extrinsic_rotation_error_deg', 'gravity_tilt_deg', 'gravity_magnitude_m_s2', 'scale',
    'scale_drift_pct_per_100m', 'gyro_noise_density', 'accel_noise_density', 'gnss_rmse_m', 'loop_drift_pct', 'loop_drift_deg_per_m'];
  return Report.parse({
    schema: 'plumbline-report/1', analysis_version: 'scripted', policy_hash: 'p'.repeat(16),
    run: { robot_id: 'kestrel-01', run_id: 'shift-1', site: 'harbourside-depot', started_at: '2026-11-30T06:00:00Z', t0: 0, duration_s: 60, distance_m: 40 },
    score, verdict: 'sound',
    estimates: { ...Object.fromEntries(scalarKeys.map((k) => [k, none('1')])), gyro_bias_rad_s: none('rad/s'), accel_bias_m_s2: none('m/s^2') },
    integrity: { imu: stream('imu.csv'), odometry: stream('odometry.csv'), gnss: null, loops: null, saturation: [], stationary: [], units: { accel_rest_ratio: null, gyro_odometry_rate_ratio: null } },
    flags: [], segments: [], loops: [],
    corrections: { scale_applied: null, gravity_rotation_deg: null, time_offset_applied_s: null, loops_used: [], loops_excluded: [], notes: [] },
    series: { trajectory: { frame: 'odom', t: [], x: [], y: [], z: [] }, repaired_trajectory: null, gnss_fixes: null },
  });
}

