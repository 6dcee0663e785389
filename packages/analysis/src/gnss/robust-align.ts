import { umeyama, type Mat3, type UmeyamaOptions, type Vec3 } from '@plumbline/geometry';
import type { FixTrack } from './fix-track.ts';

export interface Alignment {
  /** ENU ≈ scale·r·odometry + t */
  r: Mat3;
  t: Vec3;
  scale: number;
  /** Residuals of the fixes in the aligned range (index 0 = first fix of the range), metres. */
  resH: Float64Array;
  resV: Float64Array;
  /** East and north components of the residual (fix minus aligned odometry), metres. */
  resE: Float64Array;
  resN: Float64Array;
  /** Fixes that kept a non-zero weight. */
  inliers: number;
}

/**
 * Robust similarity alignment of the odometry antenna track onto the ENU fixes over [lo, hi): Umeyama (1991) in
 * iteratively reweighted least squares — three Huber passes (weight min(1, k/r), P. Huber 1964), then three passes
 * that drop fixes beyond 2.5·k (multipath jumps, divergent stretches). k in metres. Null when the alignment is
 * degenerate (too few points or a straight, motionless track).
 */
export function robustAlign(track: FixTrack, lo: number, hi: number, opts: UmeyamaOptions, kM: number): Alignment | null {
  const src = { x: track.ox.subarray(lo, hi), y: track.oy.subarray(lo, hi), z: track.oz.subarray(lo, hi) };
  const dst = { x: track.e.subarray(lo, hi), y: track.n.subarray(lo, hi), z: track.u.subarray(lo, hi) };
  const m = hi - lo;
  // Base weights 1/σ² from the fixes' stated accuracy (floor 5 cm), so RTK fixes dominate single-point ones.
  const base = new Float64Array(m);
  for (let j = 0; j < m; j++) {
    const a = track.hacc[lo + j]!;
    base[j] = Number.isFinite(a) ? 1 / Math.max(a, 0.05) ** 2 : 1;
  }
  const weights = Float64Array.from(base);
  const resH = new Float64Array(m), resV = new Float64Array(m), resE = new Float64Array(m), resN = new Float64Array(m);
  let last: Alignment | null = null;
  for (let pass = 0; pass < 6; pass++) {
    const a = umeyama(src, dst, { ...opts, dims: 3, weights });
    if (!a.ok) return last;
    const r = a.r, t = a.t, c = a.scale;
    let inliers = 0;
    for (let j = 0; j < m; j++) {
      const x = src.x[j]!, y = src.y[j]!, z = src.z[j]!;
      const pe = c * (r[0]! * x + r[1]! * y + r[2]! * z) + t[0]!;
      const pn = c * (r[3]! * x + r[4]! * y + r[5]! * z) + t[1]!;
      const pu = c * (r[6]! * x + r[7]! * y + r[8]! * z) + t[2]!;
      resE[j] = dst.x[j]! - pe;
      resN[j] = dst.y[j]! - pn;
      const h = Math.hypot(resE[j]!, resN[j]!);
      resH[j] = h;
      resV[j] = dst.z[j]! - pu;
      const rr = Math.hypot(h, resV[j]!);
      weights[j] = base[j]! * (pass < 3 ? (rr <= kM ? 1 : kM / rr) : rr <= 2.5 * kM ? 1 : 0);
      if (weights[j]! > 0) inliers++;
    }
    last = { r: Float64Array.from(r), t: Float64Array.from(t), scale: c, resH, resV, resE, resN, inliers };
    if (inliers < Math.max(5, 0.3 * m)) break;
  }
  return last;
}
