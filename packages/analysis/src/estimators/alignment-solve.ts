/**
 * Gauss–Newton on the alignment rows (see alignment-rows.ts) over a subset of rows, with gravity on the sphere of
 * radius |g| (2-DOF tangent-space update, T. Qin, P. Li & S. Shen, IEEE T-RO 34(4), 2018, §V-B) and optional
 * unknown scale and accelerometer bias. Huber weights (k = 1.345σ) with σ from the RMS of the previous iteration.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { solveSpd, solveSpdInto, symmetricEigen } from './small-math.ts';

export interface SolveSpec {
  /** Unknown scale, or a fixed scale per row (index into rows). */
  scale: 'free' | Float64Array;
  /** Unknown accelerometer bias, or a fixed one. */
  bias: 'free' | Float64Array;
  gravityMS2: number;
  /** Starting gravity direction (unit vector in the odometry world). */
  g0: Float64Array;
  s0: number;
  /**
   * Only the scale is wanted (e.g. a starting value): skip the covariance and the condition number, which are then NaN.
   * The iterations, the scale and the singular-matrix outcome are the same.
   */
  scaleOnly?: boolean;
}

export interface SolveResult {
  s: number;
  sSigma: number;
  /** Gravity vector (m/s²). */
  g: Float64Array;
  /** 2×2 covariance of the tangent update (m²/s⁴). */
  gCov: Float64Array;
  ba: Float64Array;
  baSigma: Float64Array;
  /** RMS of the row residuals, m/s. */
  rms: number;
  /** Condition number of the diagonally scaled normal matrix. */
  condition: number;
  rows: number;
}

/** Gravity on the sphere: two unit vectors orthogonal to d. */
function tangentBasis(d: Float64Array, b1: Float64Array, b2: Float64Array): void {
  const ax = Math.abs(d[0]!) < 0.9 ? [1, 0, 0] : [0, 1, 0];
  // b1 = normalize(ax − (ax·d) d), b2 = d × b1
  const k = ax[0]! * d[0]! + ax[1]! * d[1]! + ax[2]! * d[2]!;
  b1[0] = ax[0]! - k * d[0]!;
  b1[1] = ax[1]! - k * d[1]!;
  b1[2] = ax[2]! - k * d[2]!;
  const n = Math.hypot(b1[0]!, b1[1]!, b1[2]!);
  b1[0] = b1[0]! / n;
  b1[1] = b1[1]! / n;
  b1[2] = b1[2]! / n;
  b2[0] = d[1]! * b1[2]! - d[2]! * b1[1]!;
  b2[1] = d[2]! * b1[0]! - d[0]! * b1[2]!;
  b2[2] = d[0]! * b1[1]! - d[1]! * b1[0]!;
}

const scratch = {
  b1: new Float64Array(3), b2: new Float64Array(3), res: new Float64Array(3), j: new Float64Array(18), h: new Float64Array(36),
  grad: new Float64Array(6), x: new Float64Array(6), l: new Float64Array(36), mb: new Float64Array(0),
};

/** M_r·ba (3-vector) of rows r0..r1−1, stride 3, into the shared scratch. */
function biasTerms(rows: AlignmentRows, r0: number, r1: number, ba: Float64Array): Float64Array {
  if (scratch.mb.length < 3 * (r1 - r0)) scratch.mb = new Float64Array(Math.max(3 * (r1 - r0), 2 * scratch.mb.length));
  const out = scratch.mb;
  for (let r = r0; r < r1; r++) {
    for (let i = 0; i < 3; i++) {
      let v = 0;
      for (let j = 0; j < 3; j++) v += rows.m[9 * r + 3 * i + j]! * ba[j]!;
      out[3 * (r - r0) + i] = v;
    }
  }
  return out;
}

/**
 * Normal equations of the per-window case (free scale, fixed bias: unknowns s and the 2-DOF gravity update) into H
 * (3×3, upper triangle) and grad, with the Huber weight per row; returns the sum of squared residuals. The same sums
 * as the general loop of `solveAlignment`, with the Jacobian rows [λ_i, βG·b1_i, βG·b2_i] held in locals.
 */
function accumulateFreeScale(
  rows: AlignmentRows, r0: number, r1: number, s: number, d: Float64Array, b1: Float64Array, b2: Float64Array, G: number,
  mb: Float64Array, huber: number, H: Float64Array, grad: Float64Array,
): number {
  const lam = rows.lam, y = rows.y;
  const d0 = d[0]!, d1 = d[1]!, d2 = d[2]!, u0 = b1[0]!, u1 = b1[1]!, u2 = b1[2]!, v0 = b2[0]!, v1 = b2[1]!, v2 = b2[2]!;
  let h00 = 0, h01 = 0, h02 = 0, h11 = 0, h12 = 0, h22 = 0, g0 = 0, g1 = 0, g2 = 0, sse = 0;
  for (let r = r0; r < r1; r++) {
    const beta = rows.beta[r]!, o = 3 * r, q = 3 * (r - r0);
    const l0 = lam[o]!, l1 = lam[o + 1]!, l2 = lam[o + 2]!;
    const e0 = s * l0 + beta * G * d0 - mb[q]! - y[o]!;
    const e1 = s * l1 + beta * G * d1 - mb[q + 1]! - y[o + 1]!;
    const e2 = s * l2 + beta * G * d2 - mb[q + 2]! - y[o + 2]!;
    const a0 = beta * G * u0, a1 = beta * G * u1, a2 = beta * G * u2;
    const c0 = beta * G * v0, c1 = beta * G * v1, c2 = beta * G * v2;
    const e = Math.sqrt(e0 * e0 + e1 * e1 + e2 * e2);
    sse += e * e;
    const w = e <= huber ? 1 : huber / e;
    h00 += w * (l0 * l0 + l1 * l1 + l2 * l2);
    h01 += w * (l0 * a0 + l1 * a1 + l2 * a2);
    h02 += w * (l0 * c0 + l1 * c1 + l2 * c2);
    g0 -= w * (l0 * e0 + l1 * e1 + l2 * e2);
    h11 += w * (a0 * a0 + a1 * a1 + a2 * a2);
    h12 += w * (a0 * c0 + a1 * c1 + a2 * c2);
    g1 -= w * (a0 * e0 + a1 * e1 + a2 * e2);
    h22 += w * (c0 * c0 + c1 * c1 + c2 * c2);
    g2 -= w * (c0 * e0 + c1 * e1 + c2 * e2);
  }
  H[0] = h00;
  H[1] = h01;
  H[2] = h02;
  H[4] = h11;
  H[5] = h12;
  H[8] = h22;
  grad[0] = g0;
  grad[1] = g1;
  grad[2] = g2;
  return sse;
}

/** Solves over rows [r0, r1). Returns null when the normal matrix is singular. */
export function solveAlignment(rows: AlignmentRows, r0: number, r1: number, spec: SolveSpec, iterations = 6): SolveResult | null {
  const freeS = spec.scale === 'free', freeB = spec.bias === 'free';
  const np = (freeS ? 1 : 0) + 2 + (freeB ? 3 : 0);
  const iG = freeS ? 1 : 0, iB = iG + 2;
  const d = Float64Array.from(spec.g0);
  let s = spec.s0;
  const ba = freeB ? new Float64Array(3) : Float64Array.from(spec.bias as Float64Array);
  // Scratch shared by the calls (one solve at a time; nothing of it is returned).
  const { b1, b2, res } = scratch;
  const J = scratch.j.subarray(0, 3 * np), H = scratch.h.subarray(0, np * np), grad = scratch.grad.subarray(0, np);
  const x = scratch.x.subarray(0, np), L = scratch.l.subarray(0, np * np);
  let inv: Float64Array | null = null, rms = 0, huber = Number.POSITIVE_INFINITY;
  const G = spec.gravityMS2;
  // M_r·ba of every row once (the bias is fixed during the iterations when it is not free).
  const mb = freeB ? null : biasTerms(rows, r0, r1, ba);
  for (let it = 0; it <= iterations; it++) {
    tangentBasis(d, b1, b2);
    H.fill(0);
    grad.fill(0);
    let sse = 0;
    if (freeS && mb !== null) sse = accumulateFreeScale(rows, r0, r1, s, d, b1, b2, G, mb, huber, H, grad);
    else {
      for (let r = r0; r < r1; r++) {
        const sr = freeS ? s : (spec.scale as Float64Array)[r]!;
        const beta = rows.beta[r]!;
        for (let i = 0; i < 3; i++) {
          let mbi = 0;
          if (mb !== null) mbi = mb[3 * (r - r0) + i]!;
          else for (let j = 0; j < 3; j++) mbi += rows.m[9 * r + 3 * i + j]! * ba[j]!;
          res[i] = sr * rows.lam[3 * r + i]! + beta * G * d[i]! - mbi - rows.y[3 * r + i]!;
          const o = i * np;
          if (freeS) J[o] = rows.lam[3 * r + i]!;
          J[o + iG] = beta * G * b1[i]!;
          J[o + iG + 1] = beta * G * b2[i]!;
          if (freeB) for (let j = 0; j < 3; j++) J[o + iB + j] = -rows.m[9 * r + 3 * i + j]!;
        }
        const e = Math.sqrt(res[0]! * res[0]! + res[1]! * res[1]! + res[2]! * res[2]!);
        sse += e * e;
        const w = e <= huber ? 1 : huber / e;
        for (let a = 0; a < np; a++) {
          for (let c = a; c < np; c++) H[a * np + c] = H[a * np + c]! + w * (J[a]! * J[c]! + J[np + a]! * J[np + c]! + J[2 * np + a]! * J[2 * np + c]!);
          grad[a] = grad[a]! - w * (J[a]! * res[0]! + J[np + a]! * res[1]! + J[2 * np + a]! * res[2]!);
        }
      }
    }
    for (let a = 0; a < np; a++) for (let c = 0; c < a; c++) H[a * np + c] = H[c * np + a]!;
    rms = Math.sqrt(sse / Math.max(1, 3 * (r1 - r0)));
    huber = 1.345 * Math.sqrt(3) * rms;
    // The inverse (covariance) is needed from the last pass only.
    if (it === iterations) {
      if (spec.scaleOnly === true) {
        if (!solveSpdInto(x, L, H, grad, np)) return null;
        break;
      }
      const sol = solveSpd(H, grad, np);
      if (sol === null) return null;
      inv = sol.inv;
      break;
    }
    if (!solveSpdInto(x, L, H, grad, np)) return null;
    if (freeS) s += x[0]!;
    const u0 = x[iG]!, u1 = x[iG + 1]!;
    for (let i = 0; i < 3; i++) d[i] = d[i]! + u0 * b1[i]! + u1 * b2[i]!;
    const n = Math.hypot(d[0]!, d[1]!, d[2]!);
    for (let i = 0; i < 3; i++) d[i] = d[i]! / n;
    if (freeB) for (let j = 0; j < 3; j++) ba[j] = ba[j]! + x[iB + j]!;
    // Converged: one more pass only to refresh H and the residuals at the solution.
    let step = Math.abs(u0) + Math.abs(u1) + (freeS ? Math.abs(x[0]!) : 0);
    if (freeB) step += Math.abs(x[iB]!) + Math.abs(x[iB + 1]!) + Math.abs(x[iB + 2]!);
    if (step < 1e-7) it = iterations - 1;
  }
  if (spec.scaleOnly === true) {
    const nan = Number.NaN;
    return {
      s, sSigma: nan, g: Float64Array.of(G * d[0]!, G * d[1]!, G * d[2]!), gCov: Float64Array.of(nan, nan, nan, nan),
      ba, baSigma: Float64Array.of(nan, nan, nan), rms, condition: nan, rows: r1 - r0,
    };
  }
  const dof = Math.max(1, 3 * (r1 - r0) - np);
  const s2 = (rms * rms * 3 * (r1 - r0)) / dof;
  const cov = (a: number, c: number) => inv![a * np + c]! * s2;
  const diag = new Float64Array(np);
  for (let a = 0; a < np; a++) diag[a] = 1 / Math.sqrt(H[a * np + a]!);
  const scaled = new Float64Array(np * np);
  for (let a = 0; a < np; a++) for (let c = 0; c < np; c++) scaled[a * np + c] = H[a * np + c]! * diag[a]! * diag[c]!;
  const ev = symmetricEigen(scaled, np).values;
  return {
    s, sSigma: freeS ? Math.sqrt(cov(0, 0)) : 0,
    g: Float64Array.of(G * d[0]!, G * d[1]!, G * d[2]!),
    gCov: Float64Array.of(cov(iG, iG) * G * G, cov(iG, iG + 1) * G * G, cov(iG + 1, iG) * G * G, cov(iG + 1, iG + 1) * G * G),
    ba, baSigma: freeB ? Float64Array.of(Math.sqrt(cov(iB, iB)), Math.sqrt(cov(iB + 1, iB + 1)), Math.sqrt(cov(iB + 2, iB + 2))) : new Float64Array(3),
    rms, condition: ev[0]! > 0 ? ev[np - 1]! / ev[0]! : Number.POSITIVE_INFINITY, rows: r1 - r0,
  };
}

const startH = new Float64Array(16), startB = new Float64Array(4), startL = new Float64Array(16), startX = new Float64Array(4);

/**
 * Closed-form start: linear least squares for (s, g) with |g| free and the bias fixed; null when singular. Each row
 * component i has the Jacobian [λ_i, β·e_i], so the normal matrix holds Σλ², Σβλ_i and Σβ² (the same sums, in the
 * same order, as the dense accumulation of those rows).
 */
export function linearStart(rows: AlignmentRows, r0: number, r1: number, ba: ArrayLike<number>): { s: number; g: Float64Array } | null {
  const ba0 = ba[0]!, ba1 = ba[1]!, ba2 = ba[2]!;
  let ll = 0, bl0 = 0, bl1 = 0, bl2 = 0, bb0 = 0, bb1 = 0, bb2 = 0, ly = 0, by0 = 0, by1 = 0, by2 = 0;
  for (let r = r0; r < r1; r++) {
    const beta = rows.beta[r]!, o = 3 * r, q = 9 * r, m = rows.m;
    const y0 = rows.y[o]! + m[q]! * ba0 + m[q + 1]! * ba1 + m[q + 2]! * ba2;
    const y1 = rows.y[o + 1]! + m[q + 3]! * ba0 + m[q + 4]! * ba1 + m[q + 5]! * ba2;
    const y2 = rows.y[o + 2]! + m[q + 6]! * ba0 + m[q + 7]! * ba1 + m[q + 8]! * ba2;
    const l0 = rows.lam[o]!, l1 = rows.lam[o + 1]!, l2 = rows.lam[o + 2]!;
    ll += l0 * l0;
    ll += l1 * l1;
    ll += l2 * l2;
    bl0 += l0 * beta;
    bl1 += l1 * beta;
    bl2 += l2 * beta;
    bb0 += beta * beta;
    bb1 += beta * beta;
    bb2 += beta * beta;
    ly += l0 * y0;
    ly += l1 * y1;
    ly += l2 * y2;
    by0 += beta * y0;
    by1 += beta * y1;
    by2 += beta * y2;
  }
  const H = startH;
  H.fill(0);
  H[0] = ll;
  H[1] = H[4] = bl0;
  H[2] = H[8] = bl1;
  H[3] = H[12] = bl2;
  H[5] = bb0;
  H[10] = bb1;
  H[15] = bb2;
  startB[0] = ly;
  startB[1] = by0;
  startB[2] = by1;
  startB[3] = by2;
  if (!solveSpdInto(startX, startL, H, startB, 4)) return null;
  return { s: startX[0]!, g: Float64Array.of(startX[1]!, startX[2]!, startX[3]!) };
}
