import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import type { Path, Series } from '@plumbline/contracts';
import { lttb } from '@plumbline/geometry';
import type { WindowSeries } from '../estimators/types.ts';

/** Points per plotted series at most (common practice for a chart a few hundred pixels wide, with margin). */
export const MAX_POINTS = 2000;

/** Union of LTTB picks of two coordinates against time (each half the budget), ascending. */
function pickPath(t: Float64Array, a: Float64Array, b: Float64Array, max: number): Int32Array {
  if (t.length <= max) return Int32Array.from({ length: t.length }, (_, i) => i);
  const ia = lttb(t, a, max >> 1), ib = lttb(t, b, max >> 1);
  const set = new Set<number>([...ia, ...ib]);
  return Int32Array.from([...set].sort((x, y) => x - y));
}

/** Downsampled path (run seconds since t0, metres), picking the same indices in x and y. */
export function pathSeries(frame: string, c: OdometryColumns, t0: number, max = MAX_POINTS): Path {
  const idx = pickPath(c.t.subarray(0, c.n), c.x.subarray(0, c.n), c.y.subarray(0, c.n), max);
  return {
    frame,
    t: Array.from(idx, (i) => c.t[i]! - t0),
    x: Array.from(idx, (i) => c.x[i]!),
    y: Array.from(idx, (i) => c.y[i]!),
    z: Array.from(idx, (i) => c.z[i]!),
  };
}

/** GNSS fixes with finite ENU, downsampled, with their GGA quality codes. */
export function fixSeries(t: Float64Array, e: Float64Array, n: Float64Array, u: Float64Array, fix: Float64Array, t0: number): Path & { fix: number[] } {
  const keep: number[] = [];
  for (let i = 0; i < t.length; i++) if (Number.isFinite(e[i]! + n[i]! + u[i]!)) keep.push(i);
  const tt = Float64Array.from(keep, (i) => t[i]!), ee = Float64Array.from(keep, (i) => e[i]!), nn = Float64Array.from(keep, (i) => n[i]!);
  const idx = Array.from(pickPath(tt, ee, nn, MAX_POINTS), (j) => keep[j]!);
  return {
    frame: 'enu',
    t: idx.map((i) => t[i]! - t0),
    x: idx.map((i) => e[i]!),
    y: idx.map((i) => n[i]!),
    z: idx.map((i) => u[i]!),
    fix: idx.map((i) => Math.round(Number.isFinite(fix[i]!) ? fix[i]! : 0)),
  };
}

/** A scalar series (times epoch → run seconds; NaN → null), LTTB-downsampled over its finite values. */
export function scalarSeries(unit: string, t: Float64Array, v: Float64Array, t0: number, sigma: Float64Array | null = null, scale = 1): Series {
  const idx = t.length <= MAX_POINTS ? Int32Array.from({ length: t.length }, (_, i) => i) : lttb(t, v, MAX_POINTS);
  const val = (x: number) => (Number.isFinite(x) ? x * scale : null);
  const out: Series = { unit, t: Array.from(idx, (i) => t[i]! - t0), v: Array.from(idx, (i) => val(v[i]!)) };
  if (sigma) out.sigma = Array.from(idx, (i) => val(sigma[i]!));
  return out;
}

export function windowSeries(w: WindowSeries, t0: number, unit = w.unit, scale = 1): Series {
  return scalarSeries(unit, w.t, w.value, t0, w.sigma, scale);
}

/** |gyro| (rad/s) and |accel| (m/s²) per IMU sample, downsampled. One O(n) pass. */
/** Downsampled magnitudes of the angular rate and the specific force. */
export interface ImuNorms {
  gyro: Series;
  accel: Series;
}

export function imuNormSeries(imu: ImuColumns, t0: number): ImuNorms {
  const n = imu.n, g = new Float64Array(n), a = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    // √(x² + y² + z²) rather than Math.hypot: IMU magnitudes cannot overflow, and hypot cost 1.2 s on 5.76 M samples.
    const gx = imu.gx[i]!, gy = imu.gy[i]!, gz = imu.gz[i]!, ax = imu.ax[i]!, ay = imu.ay[i]!, az = imu.az[i]!;
    g[i] = Math.sqrt(gx * gx + gy * gy + gz * gz);
    a[i] = Math.sqrt(ax * ax + ay * ay + az * az);
  }
  const t = imu.t.subarray(0, n);
  return { gyro: scalarSeries('rad/s', t, g, t0), accel: scalarSeries('m/s²', t, a, t0) };
}
