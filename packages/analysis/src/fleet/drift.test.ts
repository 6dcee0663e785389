import { describe, expect, it } from 'vitest';
import type { CalibrationSeries } from '@plumbline/contracts';
import { detectDrift, maintenanceFindings } from './drift.ts';
import type { RunEstimates } from './calibration-series.ts';

/** Deterministic noise: a fixed pseudo-random sequence in [−1, 1] (sum of incommensurate sines; common practice). */
const wobble = (i: number) => Math.sin(i * 12.9898) * 0.6 + Math.sin(i * 78.233) * 0.4;

function series(metric: CalibrationSeries['metric'], v: number[]): CalibrationSeries {
  return { metric, unit: 'u', run: v.map((_, i) => `r${i}`), started_at: v.map((_, i) => `2026-03-${String(i + 1).padStart(2, '0')}T08:00:00Z`), v, sigma: v.map(() => null) };
}

describe('detectDrift', () => {
  it('finds a rotation creeping 0.15°/run from run 10 on, with its onset near run 10', () => {
    const v = Array.from({ length: 30 }, (_, i) => 0.5 + 0.3 * wobble(i) + (i >= 10 ? 0.15 * (i - 10) : 0));
    const d = detectDrift(series('extrinsic_rotation_deg', v));
    expect(d).not.toBeNull();
    expect(d!.method).toBe('trend');
    expect(Math.abs(d!.onset - 10)).toBeLessThanOrEqual(3); // onset resolution: a few runs at this noise (σ ≈ 0.2°)
    expect(d!.slope!).toBeGreaterThan(0.1);
    expect(d!.slope!).toBeLessThan(0.2);
    expect(d!.slopeLow!).toBeGreaterThan(0);
  });
  it('finds a step in the time offset and calls it a step', () => {
    const v = Array.from({ length: 20 }, (_, i) => 2 * wobble(i) + (i >= 14 ? 12 : 0));
    const d = detectDrift(series('time_offset_ms', v));
    expect(d).toMatchObject({ method: 'step', onset: 14 });
    expect(d!.change).toBeGreaterThan(9);
  });
  it('stays quiet on stable noisy series, on small trends and on improvement of an error magnitude', () => {
    expect(detectDrift(series('extrinsic_rotation_deg', Array.from({ length: 30 }, (_, i) => 0.6 + 0.4 * wobble(i))))).toBeNull();
    expect(detectDrift(series('time_offset_ms', Array.from({ length: 30 }, (_, i) => 0.1 * i + wobble(i))))).toBeNull(); // 3 ms < 5 ms
    expect(detectDrift(series('loop_drift_pct', Array.from({ length: 30 }, (_, i) => 3 - 0.1 * i + 0.1 * wobble(i))))).toBeNull();
    expect(detectDrift(series('extrinsic_rotation_deg', [0, 5, 5, 5, 5]))).toBeNull(); // fewer than 6 runs
  });
});

describe('maintenanceFindings', () => {
  it('words a finding plainly with the size, the run count and the date', () => {
    const none = { value: null, sigma: null, unit: '', reason: 'n/a' };
    const runs: RunEstimates[] = Array.from({ length: 16 }, (_, i) => ({
      run: `run-${i}`,
      started_at: `2026-03-${String(i + 1).padStart(2, '0')}T08:00:00Z`,
      estimates: {
        time_offset_s: none, clock_skew_ppm: none, gyro_bias_rad_s: none, accel_bias_m_s2: none, gravity_tilt_deg: none, gravity_magnitude_m_s2: none,
        scale: none, scale_drift_pct_per_100m: none, gyro_noise_density: none, accel_noise_density: none, gnss_rmse_m: none, loop_drift_pct: none, loop_drift_deg_per_m: none,
        extrinsic_rotation_error_deg: { value: 0.4 + 0.1 * wobble(i) + (i >= 4 ? 0.15 * (i - 4) : 0), sigma: 0.2, unit: 'deg' },
      },
    }));
    const [f, ...rest] = maintenanceFindings('kestrel-01', runs, '2026-03-20T00:00:00.000Z');
    expect(rest).toEqual([]);
    expect(f).toMatchObject({ robot_id: 'kestrel-01', metric: 'extrinsic_rotation_deg', status: 'open', latest_run: 'run-15' });
    expect(f!.message).toMatch(/^camera–IMU rotation has moved 1\.\d° over 1\d runs since 2026-03-0\d: recalibrate$/);
  });
});
