/**
 * Pose lookup at arbitrary times inside a columnar trajectory: slerp of orientation and lerp of position between
 * the two bracketing samples. Binary search for random access; a cursor that walks forward makes monotone sequential
 * queries (e.g. IMU times against odometry) O(1) amortised.
 */
import * as quat from './quat.ts';
import type { Pose, PoseColumns } from './pose.ts';

/**
 * Index of the last sample with t[i] ≤ x in a non-decreasing array (−1 when x < t[0], n−1 when x ≥ t[n−1]).
 * Searches [lo, hi) only; NaN x returns −1.
 */
export function searchFloor(t: Float64Array, x: number, lo = 0, hi = t.length): number {
  if (!(x >= t[lo]!)) return lo - 1;
  let a = lo;
  let b = hi - 1;
  if (x >= t[b]!) return b;
  // invariant: t[a] ≤ x < t[b]
  while (b - a > 1) {
    const m = (a + b) >>> 1;
    if (t[m]! <= x) a = m;
    else b = m;
  }
  return a;
}

const qa = quat.create();
const qb = quat.create();

/**
 * Writes the pose at `tSec` (interpolated between samples i and i+1) into `out`; returns false when tSec is outside
 * [t[0], t[n−1]] or not finite. A zero-length interval (duplicate timestamps) yields sample i.
 */
function interpolateAt(out: Pose, c: PoseColumns, i: number, tSec: number): boolean {
  if (i < 0) return false;
  const j = i + 1 < c.n ? i + 1 : i;
  const dt = c.t[j]! - c.t[i]!;
  const f = dt > 0 ? (tSec - c.t[i]!) / dt : 0;
  const g = 1 - f;
  out.t[0] = g * c.x[i]! + f * c.x[j]!;
  out.t[1] = g * c.y[i]! + f * c.y[j]!;
  out.t[2] = g * c.z[i]! + f * c.z[j]!;
  quat.normalize(qa, quat.set(qa, c.qw[i]!, c.qx[i]!, c.qy[i]!, c.qz[i]!));
  if (f === 0) {
    out.q.set(qa);
    return true;
  }
  quat.normalize(qb, quat.set(qb, c.qw[j]!, c.qx[j]!, c.qy[j]!, c.qz[j]!));
  quat.slerp(out.q, qa, qb, f);
  return true;
}

/** One-shot interpolation by binary search, O(log n). Returns false outside the trajectory's time span. */
export function poseAt(out: Pose, cols: PoseColumns, tSec: number): boolean {
  if (cols.n === 0 || !(tSec <= cols.t[cols.n - 1]!)) return false;
  return interpolateAt(out, cols, searchFloor(cols.t, tSec, 0, cols.n), tSec);
}

/**
 * Reusable interpolator over one trajectory. Keeps a cursor: a query at or after the previous one walks forward a
 * few samples before falling back to binary search, so a monotone sweep over m query times costs O(n + m).
 * Times must be non-decreasing (bundle readers guarantee this).
 */
export class PoseInterpolator {
  private cursor = 0;

  constructor(private readonly cols: PoseColumns) {}

  /** Time span covered, seconds; NaN when empty. */
  get startSec(): number {
    return this.cols.n > 0 ? this.cols.t[0]! : Number.NaN;
  }
  get endSec(): number {
    return this.cols.n > 0 ? this.cols.t[this.cols.n - 1]! : Number.NaN;
  }

  /** Writes the pose at tSec into out; false when tSec is outside [startSec, endSec] (out then untouched). */
  at(out: Pose, tSec: number): boolean {
    const c = this.cols;
    if (c.n === 0 || !(tSec >= c.t[0]!) || !(tSec <= c.t[c.n - 1]!)) return false;
    let i = this.cursor;
    if (tSec < c.t[i]!) {
      i = searchFloor(c.t, tSec, 0, i + 1);
    } else {
      // gallop forward: sequential queries usually land in the same or the next interval
      let steps = 0;
      while (i + 1 < c.n && c.t[i + 1]! <= tSec && steps < 8) {
        i++;
        steps++;
      }
      if (i + 1 < c.n && c.t[i + 1]! <= tSec) i = searchFloor(c.t, tSec, i, c.n);
    }
    this.cursor = i;
    return interpolateAt(out, c, i, tSec);
  }
}
