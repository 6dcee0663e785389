import type { OdometryColumns } from '@plumbline/bundle';

/**
 * Keyframe selection for the pose graph: a new keyframe whenever the odometry has moved `stepM` (odometry units),
 * turned `stepRad`, or `stepS` seconds have passed since the last one (common practice: 1 m / 10° / 1 s), plus the
 * first and last poses and every index in `required` (loop ends). Returns sorted unique odometry indices.
 */
export function selectKeyframes(
  odo: OdometryColumns, dist: Float64Array, required: Iterable<number>, stepM = 1, stepRad = (10 * Math.PI) / 180, stepS = 1,
): Int32Array {
  const n = odo.n;
  const mark = new Uint8Array(n);
  if (n === 0) return new Int32Array(0);
  mark[0] = 1;
  mark[n - 1] = 1;
  let last = 0;
  for (let i = 1; i < n; i++) {
    // |angle| between unit quaternions: 2·acos(|⟨qa, qb⟩|)
    const dot = Math.abs(
      odo.qw[i]! * odo.qw[last]! + odo.qx[i]! * odo.qx[last]! + odo.qy[i]! * odo.qy[last]! + odo.qz[i]! * odo.qz[last]!,
    );
    const angle = 2 * Math.acos(Math.min(1, dot));
    if (dist[i]! - dist[last]! >= stepM || angle >= stepRad || odo.t[i]! - odo.t[last]! >= stepS) {
      mark[i] = 1;
      last = i;
    }
  }
  for (const r of required) if (r >= 0 && r < n) mark[r] = 1;
  let count = 0;
  for (let i = 0; i < n; i++) count += mark[i]!;
  const out = new Int32Array(count);
  for (let i = 0, k = 0; i < n; i++) if (mark[i]) out[k++] = i;
  return out;
}
