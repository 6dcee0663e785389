/**
 * How much a calibration quantity must move across runs before it is worth a maintenance visit, and what to tell
 * the technician. The sizes are common practice (facts of the trade, no single published source): they sit at about
 * half the per-run flag thresholds of the default policy, so a drift is reported before single runs start failing.
 */
import type { CalibrationMetric } from '@plumbline/contracts';

export interface DriftRule {
  /** Smallest change (metric unit) reported as a finding. */
  minChange: number;
  /** Change at or above which the finding is critical. */
  criticalChange: number;
  /** `up`: only growth matters (magnitudes such as an error angle); `both`: either sign (signed offsets). */
  direction: 'up' | 'both';
  /** Plain subject of the sentence, e.g. "camera–IMU rotation". */
  noun: string;
  /** What to do, imperative. */
  action: string;
  /** Display unit and factor from the metric unit, and decimals. */
  display: { unit: string; factor: number; digits: number };
}

export const DRIFT_RULES: Record<CalibrationMetric, DriftRule> = {
  // Policy warns at 20 ms per run; a creeping offset of 5 ms is a clock losing sync. Common practice.
  time_offset_ms: { minChange: 5, criticalChange: 20, direction: 'both', noun: 'odometry–IMU time offset', action: 'check clock synchronisation (time source, firmware)', display: { unit: ' ms', factor: 1, digits: 1 } },
  // Crystal oscillators hold a few tens of ppm; a change of 30 ppm is a different clock behaviour. Common practice.
  clock_skew_ppm: { minChange: 30, criticalChange: 100, direction: 'both', noun: 'clock skew', action: 'check the clock source and firmware', display: { unit: ' ppm', factor: 1, digits: 0 } },
  // Policy warns at 2° per run; a mount creeping by 1° is a loose bracket. Common practice.
  extrinsic_rotation_deg: { minChange: 1, criticalChange: 2.5, direction: 'up', noun: 'camera–IMU rotation', action: 'recalibrate', display: { unit: '°', factor: 1, digits: 1 } },
  // 0.003 rad/s ≈ 0.17 °/s: within turn-on spread of consumer MEMS but large as a trend. Common practice.
  gyro_bias_rad_s: { minChange: 0.003, criticalChange: 0.01, direction: 'up', noun: 'gyro bias', action: 'recalibrate the gyro bias and check the IMU temperature', display: { unit: ' °/s', factor: 180 / Math.PI, digits: 2 } },
  accel_bias_m_s2: { minChange: 0.05, criticalChange: 0.2, direction: 'up', noun: 'accelerometer bias', action: 'recalibrate the accelerometer', display: { unit: ' m/s²', factor: 1, digits: 3 } },
  // 0.05 m/s² ≈ 0.5 % scale factor on the accelerometer. Common practice.
  gravity_magnitude_m_s2: { minChange: 0.05, criticalChange: 0.2, direction: 'both', noun: 'gravity magnitude at rest', action: 'recalibrate the accelerometer scale factors', display: { unit: ' m/s²', factor: 1, digits: 3 } },
  // About 40 % of a typical consumer gyro noise density (2.5e-4 rad/s/√Hz): a failing or vibrating IMU. Common practice.
  gyro_noise_density: { minChange: 1e-4, criticalChange: 5e-4, direction: 'up', noun: 'gyro noise', action: 'check the IMU mount for vibration and the sensor itself', display: { unit: ' rad/s/√Hz', factor: 1, digits: 5 } },
  // VO scale drift of 0.5–2 % is normal; a 2 % shift in the run scale is a camera calibration change. Common practice.
  scale_error_pct: { minChange: 2, criticalChange: 5, direction: 'both', noun: 'odometry scale', action: 'recalibrate the camera intrinsics and baseline', display: { unit: ' %', factor: 1, digits: 1 } },
  // Loop closure error of 0.5–2 % of path is normal; growth by 1 % is degrading odometry. Common practice.
  loop_drift_pct: { minChange: 1, criticalChange: 3, direction: 'up', noun: 'loop drift', action: 'check the odometry sensors (lens, lighting, wheel wear)', display: { unit: ' % of path', factor: 1, digits: 1 } },
};
