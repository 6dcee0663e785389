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

/** Default keyframe budget: the pose graph of a long run stays at about this many nodes. */
export const MAX_KEYFRAMES = 10_000;

export interface KeyframeSelection {
  keyframes: Int32Array;
  /** Factor applied to the 1 m / 10° / 1 s steps (1 = the default spacing). */
  spacing: number;
}

/**
 * `selectKeyframes` with a node budget: when the default 1 m / 10° / 1 s spacing gives more than `maxNodes`
 * keyframes (long runs, e.g. an 8-hour shift gives about 40,000), all three steps are scaled by a common factor
 * (the turn step capped at 45°) until the graph fits; loop ends are always kept. Factorisation cost grows faster
 * than linearly with the node count, so this bounds the loop check's time; the odometry edges' σ grow with the
 * step (3 % of path), so the graph stays statistically consistent (common practice).
 */
export function selectKeyframesBounded(
  odo: OdometryColumns, dist: Float64Array, required: number[], maxNodes = MAX_KEYFRAMES,
): KeyframeSelection {
  const base = (10 * Math.PI) / 180;
  let spacing = 1;
  let kf = selectKeyframes(odo, dist, required);
  const fixed = new Set(required).size + 2;
  for (let pass = 0; pass < 8 && kf.length > maxNodes; pass++) {
    // Free keyframes scale roughly as 1/spacing; aim 5 % below the budget.
    const free = Math.max(kf.length - fixed, 1), room = Math.max(0.95 * maxNodes - fixed, 0.05 * maxNodes);
    spacing *= Math.max(free / room, 1.1);
    kf = selectKeyframes(odo, dist, required, spacing, Math.min(base * spacing, Math.PI / 4), spacing);
  }
  return { keyframes: kf, spacing };
}
