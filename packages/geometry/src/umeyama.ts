/**
 * Least-squares similarity alignment of two point sets (Umeyama): finds rotation R, translation t and scale c
 * minimising Σ wᵢ‖yᵢ − (c·R·xᵢ + t)‖², i.e. dst ≈ c·R·src + t (e.g. odometry positions onto GNSS ENU positions).
 * Method: S. Umeyama, "Least-squares estimation of transformation parameters between two point patterns",
 * IEEE TPAMI 13(4), 1991 (from memory): SVD of the cross-covariance Σxy = U·D·Vᵀ, R = U·S·Vᵀ with
 * S = diag(1, 1, det(U)det(V)) guarding against reflections, c = tr(D·S)/σx², t = μy − c·R·μx.
 * For planar and yaw-only problems the rotation has the closed form θ = atan2(Σ₁₀ − Σ₀₁, Σ₀₀ + Σ₁₁), which is the
 * same maximiser of tr(R·Σxyᵀ) restricted to rotations about z. Weighted means/covariances are a direct extension.
 */
import { svd3 } from './svd3.ts';
import * as mat3 from './mat3.ts';
import type { Mat3 } from './mat3.ts';
import * as quat from './quat.ts';
import type { Quat } from './quat.ts';
import type { Vec3 } from './vec3.ts';

/** Columnar points; `z` absent (or `dims: 2`) means planar points in x, y. Units: metres (any consistent unit). */
export interface PointColumns {
  x: Float64Array;
  y: Float64Array;
  z?: Float64Array | null;
}

export interface UmeyamaOptions {
  /** 2 → planar alignment in x, y (z ignored); default 3 when both sets have z, else 2. */
  dims?: 2 | 3;
  /** Fix c = 1 (rigid SE(3)/SE(2) alignment, e.g. stereo or wheel odometry with known scale). */
  fixScale?: boolean;
  /** Restrict R to a rotation about z (gravity-aligned odometry vs ENU); translation and scale stay 3-D. */
  yawOnly?: boolean;
  /** Non-negative per-point weights (e.g. 1/σ² of GNSS fixes); null = all 1. */
  weights?: Float64Array | null;
}

export type UmeyamaResult =
  | {
      ok: true;
      /** Rotation src → dst, row-major 3×3 (planar: rotation about z). */
      r: Mat3;
      /** Same rotation as a unit quaternion [w, x, y, z]. */
      q: Quat;
      /** Translation, dst units (planar: z = 0). */
      t: Vec3;
      /** Scale c (1 when fixScale). */
      scale: number;
      /** Weighted RMS of ‖yᵢ − (c·R·xᵢ + t)‖ over the points used. */
      rms: number;
      /** Points used (finite coordinates and weight > 0). */
      n: number;
    }
  | { ok: false; reason: 'too-few-points' | 'degenerate'; n: number };

const sigma = new Float64Array(9);
const su = new Float64Array(9);
const sv = new Float64Array(9);
const sd = new Float64Array(3);

/** Relative floor for a singular value / moment below which the rotation is not determined (common practice). */
const DEGENERATE_REL = 1e-12;

function usable(i: number, s: PointColumns, d: PointColumns, w: Float64Array | null, three: boolean): boolean {
  const wi = w ? w[i]! : 1;
  if (!(wi > 0)) return false;
  if (!Number.isFinite(s.x[i]! + s.y[i]! + d.x[i]! + d.y[i]!)) return false;
  return !three || Number.isFinite(s.z![i]! + d.z![i]!);
}

/** Estimates dst ≈ c·R·src + t. Points with a non-finite coordinate or weight ≤ 0 are skipped (GNSS gaps). */
export function umeyama(src: PointColumns, dst: PointColumns, options: UmeyamaOptions = {}): UmeyamaResult {
  const len = src.x.length;
  const hasZ = !!src.z && !!dst.z;
  const three = (options.dims ?? (hasZ ? 3 : 2)) === 3;
  if (three && !hasZ) throw new RangeError('umeyama: dims 3 needs z columns in both point sets');
  const w = options.weights ?? null;
  if (src.y.length !== len || dst.x.length !== len || dst.y.length !== len || (three && (src.z!.length !== len || dst.z!.length !== len)) || (w && w.length !== len)) {
    throw new RangeError(`umeyama: column lengths differ (src.x has ${len})`);
  }
  // pass 1: weighted means
  let W = 0, n = 0, mx0 = 0, mx1 = 0, mx2 = 0, my0 = 0, my1 = 0, my2 = 0;
  for (let i = 0; i < len; i++) {
    if (!usable(i, src, dst, w, three)) continue;
    const wi = w ? w[i]! : 1;
    W += wi;
    n++;
    mx0 += wi * src.x[i]!;
    mx1 += wi * src.y[i]!;
    my0 += wi * dst.x[i]!;
    my1 += wi * dst.y[i]!;
    if (three) {
      mx2 += wi * src.z![i]!;
      my2 += wi * dst.z![i]!;
    }
  }
  const minPoints = three && !options.yawOnly ? 3 : 2;
  if (n < minPoints) return { ok: false, reason: 'too-few-points', n };
  mx0 /= W; mx1 /= W; mx2 /= W; my0 /= W; my1 /= W; my2 /= W;
  // pass 2: cross-covariance Σxy = E[(y − μy)(x − μx)ᵀ] and variances
  sigma.fill(0);
  let varX = 0;
  for (let i = 0; i < len; i++) {
    if (!usable(i, src, dst, w, three)) continue;
    const wi = (w ? w[i]! : 1) / W;
    const a0 = src.x[i]! - mx0, a1 = src.y[i]! - mx1, a2 = three ? src.z![i]! - mx2 : 0;
    const b0 = dst.x[i]! - my0, b1 = dst.y[i]! - my1, b2 = three ? dst.z![i]! - my2 : 0;
    sigma[0]! += wi * b0 * a0; sigma[1]! += wi * b0 * a1; sigma[2]! += wi * b0 * a2;
    sigma[3]! += wi * b1 * a0; sigma[4]! += wi * b1 * a1; sigma[5]! += wi * b1 * a2;
    sigma[6]! += wi * b2 * a0; sigma[7]! += wi * b2 * a1; sigma[8]! += wi * b2 * a2;
    varX += wi * (a0 * a0 + a1 * a1 + a2 * a2);
  }
  const r = mat3.create();
  let trDS: number;
  if (three && !options.yawOnly) {
    if (!svd3(su, sd, sv, sigma)) return { ok: false, reason: 'degenerate', n };
    // Umeyama 1991: the rotation is unique when rank(Σxy) ≥ m − 1
    if (!(sd[1]! > DEGENERATE_REL * sd[0]!) || !(sd[0]! > 0)) return { ok: false, reason: 'degenerate', n };
    const detU = mat3.determinant(su), detV = mat3.determinant(sv);
    const s3 = detU * detV < 0 ? -1 : 1;
    for (let i = 0; i < 3; i++) {
      for (let j = 0; j < 3; j++) r[i * 3 + j] = su[i * 3]! * sv[j * 3]! + su[i * 3 + 1]! * sv[j * 3 + 1]! + s3 * su[i * 3 + 2]! * sv[j * 3 + 2]!;
    }
    trDS = sd[0]! + sd[1]! + s3 * sd[2]!;
  } else {
    const a = sigma[0]! + sigma[4]!, b = sigma[3]! - sigma[1]!;
    const h = Math.hypot(a, b);
    if (!(h > DEGENERATE_REL * varX)) return { ok: false, reason: 'degenerate', n };
    const c = a / h, s = b / h;
    r[0] = c; r[1] = -s; r[3] = s; r[4] = c;
    trDS = h + sigma[8]!; // Σ₂₂ is 0 in the planar case
  }
  const scale = options.fixScale ? 1 : trDS / varX;
  const t = new Float64Array(3);
  t[0] = my0 - scale * (r[0]! * mx0 + r[1]! * mx1 + r[2]! * mx2);
  t[1] = my1 - scale * (r[3]! * mx0 + r[4]! * mx1 + r[5]! * mx2);
  t[2] = three ? my2 - scale * (r[6]! * mx0 + r[7]! * mx1 + r[8]! * mx2) : 0;
  // pass 3: residuals summed directly (the closed form σy² − 2c·tr(DS) + c²σx², Umeyama 1991, cancels badly
  // for good fits, leaving only ~1e-8 relative accuracy in the RMS)
  let sse = 0;
  for (let i = 0; i < len; i++) {
    if (!usable(i, src, dst, w, three)) continue;
    const x0 = src.x[i]!, x1 = src.y[i]!, x2 = three ? src.z![i]! : 0;
    const e0 = dst.x[i]! - scale * (r[0]! * x0 + r[1]! * x1 + r[2]! * x2) - t[0]!;
    const e1 = dst.y[i]! - scale * (r[3]! * x0 + r[4]! * x1 + r[5]! * x2) - t[1]!;
    const e2 = three ? dst.z![i]! - scale * (r[6]! * x0 + r[7]! * x1 + r[8]! * x2) - t[2]! : 0;
    sse += (w ? w[i]! : 1) * (e0 * e0 + e1 * e1 + e2 * e2);
  }
  return { ok: true, r, q: quat.fromMat3(quat.create(), r), t, scale, rms: Math.sqrt(sse / W), n };
}

/**
 * Applies x ↦ c·R·x + t of a successful alignment to columnar points (out may alias src); planar inputs (no z)
 * use only the 2×2 block. No allocation per point.
 */
export function applySimilarity(out: PointColumns, src: PointColumns, r: Mat3, t: Vec3, scale: number): void {
  const n = src.x.length;
  const sz = src.z ?? null, oz = out.z ?? null;
  for (let i = 0; i < n; i++) {
    const x = src.x[i]!, y = src.y[i]!, z = sz ? sz[i]! : 0;
    out.x[i] = scale * (r[0]! * x + r[1]! * y + r[2]! * z) + t[0]!;
    out.y[i] = scale * (r[3]! * x + r[4]! * y + r[5]! * z) + t[1]!;
    if (oz) oz[i] = scale * (r[6]! * x + r[7]! * y + r[8]! * z) + t[2]!;
  }
}
