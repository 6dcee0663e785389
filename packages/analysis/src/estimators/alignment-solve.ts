/**
 * Gauss–Newton on the alignment rows (see alignment-rows.ts) over a subset of rows, with gravity on the sphere of
 * radius |g| (2-DOF tangent-space update, T. Qin, P. Li & S. Shen, IEEE T-RO 34(4), 2018, §V-B) and optional
 * unknown scale and accelerometer bias. Huber weights (k = 1.345σ) with σ from the RMS of the previous iteration.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { solveSpd, symmetricEigen } from './small-math.ts';

export interface SolveSpec {
  /** Unknown scale, or a fixed scale per row (index into rows). */
  scale: 'free' | Float64Array;
  /** Unknown accelerometer bias, or a fixed one. */
  bias: 'free' | Float64Array;
  gravityMS2: number;
  /** Starting gravity direction (unit vector in the odometry world). */
  g0: Float64Array;
  s0: number;
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

/** Solves over rows [r0, r1). Returns null when the normal matrix is singular. */
export function solveAlignment(rows: AlignmentRows, r0: number, r1: number, spec: SolveSpec, iterations = 6): SolveResult | null {
  const freeS = spec.scale === 'free', freeB = spec.bias === 'free';
  const np = (freeS ? 1 : 0) + 2 + (freeB ? 3 : 0);
  const iG = freeS ? 1 : 0, iB = iG + 2;
  const d = Float64Array.from(spec.g0);
  let s = spec.s0;
  const ba = freeB ? new Float64Array(3) : Float64Array.from(spec.bias as Float64Array);
  const b1 = new Float64Array(3), b2 = new Float64Array(3), J = new Float64Array(3 * np), res = new Float64Array(3);
  const H = new Float64Array(np * np), grad = new Float64Array(np);
  let inv: Float64Array | null = null, rms = 0, huber = Number.POSITIVE_INFINITY;
  const G = spec.gravityMS2;
  for (let it = 0; it <= iterations; it++) {
    tangentBasis(d, b1, b2);
    H.fill(0);
    grad.fill(0);
    let sse = 0;
    for (let r = r0; r < r1; r++) {
      const sr = freeS ? s : (spec.scale as Float64Array)[r]!;
      const beta = rows.beta[r]!;
      for (let i = 0; i < 3; i++) {
        let mb = 0;
        for (let j = 0; j < 3; j++) mb += rows.m[9 * r + 3 * i + j]! * ba[j]!;
        res[i] = sr * rows.lam[3 * r + i]! + beta * G * d[i]! - mb - rows.y[3 * r + i]!;
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
    for (let a = 0; a < np; a++) for (let c = 0; c < a; c++) H[a * np + c] = H[c * np + a]!;
    rms = Math.sqrt(sse / Math.max(1, 3 * (r1 - r0)));
    huber = 1.345 * Math.sqrt(3) * rms;
    const sol = solveSpd(H, grad, np);
    if (sol === null) return null;
    inv = sol.inv;
    if (it === iterations) break;
    const x = sol.x;
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

/** Closed-form start: linear least squares for (s, g) with |g| free and the bias fixed; null when singular. */
export function linearStart(rows: AlignmentRows, r0: number, r1: number, ba: ArrayLike<number>): { s: number; g: Float64Array } | null {
  const H = new Float64Array(16), b = new Float64Array(4), row = new Float64Array(4);
  for (let r = r0; r < r1; r++) {
    for (let i = 0; i < 3; i++) {
      let y = rows.y[3 * r + i]!;
      for (let j = 0; j < 3; j++) y += rows.m[9 * r + 3 * i + j]! * ba[j]!;
      row.fill(0);
      row[0] = rows.lam[3 * r + i]!;
      row[1 + i] = rows.beta[r]!;
      for (let a = 0; a < 4; a++) {
        for (let c = 0; c < 4; c++) H[a * 4 + c] = H[a * 4 + c]! + row[a]! * row[c]!;
        b[a] = b[a]! + row[a]! * y;
      }
    }
  }
  const sol = solveSpd(H, b, 4);
  if (sol === null) return null;
  return { s: sol.x[0]!, g: Float64Array.of(sol.x[1]!, sol.x[2]!, sol.x[3]!) };
}
