import type { OdometryColumns } from '@plumbline/bundle';
import { searchFloor } from '@plumbline/geometry';

/** Odometry path length at every pose (odometry units; metres when the scale is 1), one O(n) pass. */
export function cumulativeDistance(odo: OdometryColumns): Float64Array {
  const d = new Float64Array(odo.n);
  for (let i = 1; i < odo.n; i++) {
    d[i] = d[i - 1]! + Math.hypot(odo.x[i]! - odo.x[i - 1]!, odo.y[i]! - odo.y[i - 1]!, odo.z[i]! - odo.z[i - 1]!);
  }
  return d;
}

/** Index of the pose nearest in time to tSec (clamped to the ends). */
export function nearestIndex(t: Float64Array, tSec: number): number {
  const n = t.length;
  if (n === 0) return -1;
  const i = searchFloor(t, tSec);
  if (i < 0) return 0;
  if (i >= n - 1) return n - 1;
  return tSec - t[i]! <= t[i + 1]! - tSec ? i : i + 1;
}

/** Path length at time tSec, linearly interpolated between poses (clamped). */
export function distanceAt(t: Float64Array, dist: Float64Array, tSec: number): number {
  const n = t.length;
  if (n === 0) return 0;
  const i = searchFloor(t, tSec);
  if (i < 0) return dist[0]!;
  if (i >= n - 1) return dist[n - 1]!;
  const span = t[i + 1]! - t[i]!;
  const f = span > 0 ? (tSec - t[i]!) / span : 0;
  return dist[i]! + f * (dist[i + 1]! - dist[i]!);
}
