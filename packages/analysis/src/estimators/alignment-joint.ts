/**
 * Run-level joint alignment: one scale per window (rows assigned to the nearest window centre), one gravity on the
 * sphere (2-DOF tangent update) and one accelerometer bias, solved by Gauss–Newton with the per-window scales
 * eliminated by the Schur complement, so the cost is O(rows) for any run length. Same rows and model as
 * alignment-rows.ts (Mur-Artal & Tardós, IEEE RA-L 2017; tangent-space gravity of Qin & Shen, IEEE T-RO 2018).
 * A weak prior (σ = 0.5) on each window scale keeps windows without acceleration excitation from going singular.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { solveSpd } from './small-math.ts';

export interface JointResult {
  g: Float64Array;
  /** 2×2 covariance of the gravity tangent update, (m/s²)². */
  gCov: Float64Array;
  ba: Float64Array;
  baSigma: Float64Array;
  windowScale: Float64Array;
}

function basis(d: Float64Array, b1: Float64Array, b2: Float64Array): void {
  const ax = Math.abs(d[0]!) < 0.9 ? [1, 0, 0] : [0, 1, 0];
  const k = ax[0]! * d[0]! + ax[1]! * d[1]! + ax[2]! * d[2]!;
  for (let i = 0; i < 3; i++) b1[i] = ax[i]! - k * d[i]!;
  const n = Math.hypot(b1[0]!, b1[1]!, b1[2]!);
  for (let i = 0; i < 3; i++) b1[i] = b1[i]! / n;
  b2[0] = d[1]! * b1[2]! - d[2]! * b1[1]!;
  b2[1] = d[2]! * b1[0]! - d[0]! * b1[2]!;
  b2[2] = d[0]! * b1[1]! - d[1]! * b1[0]!;
}

/** `rowWindow[r]` = window index of row r; `s0` = starting scale per window. withBias false holds ba at zero. */
export function solveJoint(rows: AlignmentRows, rowWindow: Int32Array, s0: Float64Array, G: number, withBias: boolean, iterations = 6): JointResult | null {
  const nw = s0.length, nx = withBias ? 5 : 2;
  const s = Float64Array.from(s0, (v) => (Number.isFinite(v) && v > 0 ? v : 1));
  const d = Float64Array.of(0, 0, -1), ba = new Float64Array(3);
  const b1 = new Float64Array(3), b2 = new Float64Array(3), Jx = new Float64Array(3 * nx), e = new Float64Array(3);
  const D = new Float64Array(nw), B = new Float64Array(nw * nx), rs = new Float64Array(nw);
  let Sinv: Float64Array | null = null, sigma2 = 0;
  const prior = 1 / 0.25; // information of the weak σ = 0.5 prior on each window scale
  for (let it = 0; it < iterations; it++) {
    basis(d, b1, b2);
    D.fill(prior);
    B.fill(0);
    rs.fill(0);
    const C = new Float64Array(nx * nx), rx = new Float64Array(nx);
    let sse = 0;
    for (let r = 0; r < rows.n; r++) {
      const w = rowWindow[r]!, beta = rows.beta[r]!;
      for (let i = 0; i < 3; i++) {
        let v = s[w]! * rows.lam[3 * r + i]! + beta * G * d[i]! - rows.y[3 * r + i]!;
        for (let j = 0; j < 3; j++) v -= rows.m[9 * r + 3 * i + j]! * ba[j]!;
        e[i] = v;
        Jx[i * nx] = beta * G * b1[i]!;
        Jx[i * nx + 1] = beta * G * b2[i]!;
        if (withBias) for (let j = 0; j < 3; j++) Jx[i * nx + 2 + j] = -rows.m[9 * r + 3 * i + j]!;
      }
      for (let i = 0; i < 3; i++) {
        const l = rows.lam[3 * r + i]!;
        sse += e[i]! * e[i]!;
        D[w] = D[w]! + l * l;
        rs[w] = rs[w]! - l * e[i]!;
        for (let a = 0; a < nx; a++) {
          const ja = Jx[i * nx + a]!;
          B[w * nx + a] = B[w * nx + a]! + l * ja;
          rx[a] = rx[a]! - ja * e[i]!;
          for (let c = 0; c < nx; c++) C[a * nx + c] = C[a * nx + c]! + ja * Jx[i * nx + c]!;
        }
      }
    }
    // Schur complement on the window scales: (C − Σ BᵀB/D) x = rx − Σ Bᵀ rs/D.
    for (let w = 0; w < nw; w++) {
      for (let a = 0; a < nx; a++) {
        rx[a] = rx[a]! - (B[w * nx + a]! * rs[w]!) / D[w]!;
        for (let c = 0; c < nx; c++) C[a * nx + c] = C[a * nx + c]! - (B[w * nx + a]! * B[w * nx + c]!) / D[w]!;
      }
    }
    const sol = solveSpd(C, rx, nx);
    if (sol === null) return null;
    Sinv = sol.inv;
    sigma2 = sse / Math.max(1, 3 * rows.n - nx - nw);
    const x = sol.x;
    for (let w = 0; w < nw; w++) {
      let bx = 0;
      for (let a = 0; a < nx; a++) bx += B[w * nx + a]! * x[a]!;
      s[w] = s[w]! + (rs[w]! - bx) / D[w]!;
    }
    for (let i = 0; i < 3; i++) d[i] = d[i]! + x[0]! * b1[i]! + x[1]! * b2[i]!;
    const n = Math.hypot(d[0]!, d[1]!, d[2]!);
    for (let i = 0; i < 3; i++) d[i] = d[i]! / n;
    if (withBias) for (let j = 0; j < 3; j++) ba[j] = ba[j]! + x[2 + j]!;
    // Converged (gravity direction and bias no longer move): the covariance from this pass stands.
    let moved = 0;
    for (let a = 0; a < nx; a++) moved = Math.max(moved, Math.abs(x[a]!));
    if (moved < 1e-8) break;
  }
  const cv = (a: number, c: number) => Sinv![a * nx + c]! * sigma2;
  return {
    g: Float64Array.of(G * d[0]!, G * d[1]!, G * d[2]!),
    gCov: Float64Array.of(cv(0, 0) * G * G, cv(0, 1) * G * G, cv(1, 0) * G * G, cv(1, 1) * G * G),
    ba, baSigma: withBias ? Float64Array.of(Math.sqrt(cv(2, 2)), Math.sqrt(cv(3, 3)), Math.sqrt(cv(4, 4))) : new Float64Array(3),
    windowScale: s,
  };
}
