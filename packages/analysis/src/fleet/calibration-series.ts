/**
 * Calibration series of one robot: per-run estimates read from its reports, one column per metric.
 */
import type { CalibrationMetric, CalibrationSeries, Estimates } from '@plumbline/contracts';

/** What the series builder needs of one run: its id, start time and the report's estimates. */
export interface RunEstimates {
  run: string;
  started_at: string | null;
  estimates: Estimates;
}

interface MetricSpec {
  unit: string;
  read: (e: Estimates) => { v: number | null; sigma: number | null };
}

function scalar(key: keyof Estimates, factor = 1, offset = 0): MetricSpec['read'] {
  return (e) => {
    const s = e[key] as { value: number | null; sigma: number | null } | undefined;
    if (!s || typeof s.value !== 'number') return { v: null, sigma: null };
    return { v: (s.value - offset) * factor, sigma: s.sigma === null ? null : s.sigma * Math.abs(factor) };
  };
}

/** Euclidean norm of a vector estimate; its sigma is the norm of the per-axis sigmas (an upper bound). */
function norm(key: 'gyro_bias_rad_s' | 'accel_bias_m_s2'): MetricSpec['read'] {
  return (e) => {
    const s = e[key];
    if (!s || s.value === null) return { v: null, sigma: null };
    const [x, y, z] = s.value;
    const sig = s.sigma ? Math.hypot(s.sigma[0], s.sigma[1], s.sigma[2]) : null;
    return { v: Math.hypot(x, y, z), sigma: sig };
  };
}

export const CALIBRATION_METRICS: Record<CalibrationMetric, MetricSpec> = {
  time_offset_ms: { unit: 'ms', read: scalar('time_offset_s', 1000) },
  clock_skew_ppm: { unit: 'ppm', read: scalar('clock_skew_ppm') },
  extrinsic_rotation_deg: { unit: 'deg', read: scalar('extrinsic_rotation_error_deg') },
  gyro_bias_rad_s: { unit: 'rad/s', read: norm('gyro_bias_rad_s') },
  accel_bias_m_s2: { unit: 'm/s²', read: norm('accel_bias_m_s2') },
  gravity_magnitude_m_s2: { unit: 'm/s²', read: scalar('gravity_magnitude_m_s2') },
  gyro_noise_density: { unit: 'rad/s/√Hz', read: scalar('gyro_noise_density') },
  scale_error_pct: { unit: '%', read: scalar('scale', 100, 1) },
  loop_drift_pct: { unit: '%', read: scalar('loop_drift_pct') },
};

export const CALIBRATION_METRIC_NAMES = Object.keys(CALIBRATION_METRICS) as CalibrationMetric[];

/** One series per calibration metric over `runs` (already ordered oldest first). Non-finite values read as null. */
export function calibrationSeries(runs: readonly RunEstimates[]): CalibrationSeries[] {
  return CALIBRATION_METRIC_NAMES.map((metric) => {
    const spec = CALIBRATION_METRICS[metric];
    const v: (number | null)[] = [];
    const sigma: (number | null)[] = [];
    for (const r of runs) {
      const x = spec.read(r.estimates);
      const ok = x.v !== null && Number.isFinite(x.v);
      v.push(ok ? x.v : null);
      sigma.push(ok && x.sigma !== null && Number.isFinite(x.sigma) ? x.sigma : null);
    }
    return { metric, unit: spec.unit, run: runs.map((r) => r.run), started_at: runs.map((r) => r.started_at), v, sigma };
  });
}
