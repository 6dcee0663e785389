import type { Report, ScalarEstimate, Vec3Estimate } from '@plumbline/contracts';
import { h } from '../dom.ts';
import { fmtEstimate } from '../format.ts';

const LABELS: Record<string, string> = {
  scale: 'Scale factor',
  scale_drift_pct_per_100m: 'Scale drift',
  gravity_tilt_deg: 'Gravity tilt',
  gravity_magnitude_m_s2: 'Gravity magnitude',
  time_offset_s: 'Time offset (odometry − IMU)',
  clock_skew_ppm: 'Clock skew',
  extrinsic_rotation_error_deg: 'Extrinsic rotation error',
  gyro_bias_rad_s: 'Gyro bias',
  accel_bias_m_s2: 'Accelerometer bias',
  gyro_noise_density: 'Gyro noise density',
  accel_noise_density: 'Accelerometer noise density',
  gnss_rmse_m: 'GNSS horizontal RMSE',
  loop_drift_pct: 'Loop drift',
  loop_drift_deg_per_m: 'Loop rotation drift',
};

/** Estimates as "value ± 1σ unit", or "not observable: reason" — never a bare number without its uncertainty state. */
export function renderEstimates(report: Report): HTMLElement {
  const rows = Object.entries(report.estimates as Record<string, ScalarEstimate | Vec3Estimate>).map(([key, e]) =>
    h(
      'tr',
      { class: e.value === null ? 'unobservable' : '' },
      h('th', { scope: 'row' }, LABELS[key] ?? key.replace(/_/g, ' ')),
      h('td', {}, e.value === null ? h('span', {}, h('span', { 'aria-hidden': 'true' }, '⊘ '), fmtEstimate(e)) : fmtEstimate(e)),
    ),
  );
  return h(
    'section',
    { class: 'estimates card' },
    h('h2', {}, 'Estimates'),
    h('p', { class: 'muted small' }, 'Value ± one standard deviation.'),
    h('table', { class: 'kv' }, h('tbody', {}, ...rows)),
  );
}
