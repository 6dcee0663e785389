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

/**
 * Sums over the rows that the normal equations need, per window (w) and over the run; the residual
 * e_r = s_w·λ_r + β_r·G·d − M_r·ba − y_r is linear in (s, G·d, ba), so these fixed sums give every iteration's
 * normal equations in O(windows) instead of O(rows).
 */
interface JointSums {
  /** Per window: Σ|λ|², Σβλ (stride 3), Σ Mᵀλ (stride 3), Σ λ·y. */
  ll: Float64Array;
  lb: Float64Array;
  lm: Float64Array;
  ly: Float64Array;
  /** Over the run: Σβ², Σ β·M (3×3), Σ MᵀM (3×3), Σ β·y, Σ Mᵀy. */
  bb: number;
  bm: Float64Array;
  mm: Float64Array;
  by: Float64Array;
  my: Float64Array;
}

function jointSums(rows: AlignmentRows, rowWindow: Int32Array, nw: number): JointSums {
  const S: JointSums = {
    ll: new Float64Array(nw), lb: new Float64Array(3 * nw), lm: new Float64Array(3 * nw), ly: new Float64Array(nw),
    bb: 0, bm: new Float64Array(9), mm: new Float64Array(9), by: new Float64Array(3), my: new Float64Array(3),
  };
  const { lam, y, m } = rows;
  for (let r = 0; r < rows.n; r++) {
    const w = rowWindow[r]!, beta = rows.beta[r]!, o = 3 * r, q = 9 * r;
    const l0 = lam[o]!, l1 = lam[o + 1]!, l2 = lam[o + 2]!, y0 = y[o]!, y1 = y[o + 1]!, y2 = y[o + 2]!;
    S.ll[w] = S.ll[w]! + (l0 * l0 + l1 * l1 + l2 * l2);
    S.ly[w] = S.ly[w]! + (l0 * y0 + l1 * y1 + l2 * y2);
    S.bb += beta * beta;
    for (let i = 0; i < 3; i++) {
      S.lb[3 * w + i] = S.lb[3 * w + i]! + beta * lam[o + i]!;
      S.by[i] = S.by[i]! + beta * y[o + i]!;
      // column i of M_r
      const c0 = m[q + i]!, c1 = m[q + 3 + i]!, c2 = m[q + 6 + i]!;
      S.lm[3 * w + i] = S.lm[3 * w + i]! + (l0 * c0 + l1 * c1 + l2 * c2);
      S.my[i] = S.my[i]! + (y0 * c0 + y1 * c1 + y2 * c2);
      for (let k = 0; k < 3; k++) {
        S.bm[3 * k + i] = S.bm[3 * k + i]! + beta * m[q + 3 * k + i]!;
        S.mm[3 * i + k] = S.mm[3 * i + k]! + (c0 * m[q + k]! + c1 * m[q + 3 + k]! + c2 * m[q + 6 + k]!);
      }
    }
  }
  return S;
}

/** Σ|e_r|² over the rows at (s, d, ba). */
function sumSquares(rows: AlignmentRows, rowWindow: Int32Array, s: Float64Array, d: Float64Array, ba: Float64Array, G: number): number {
  let sse = 0;
  for (let r = 0; r < rows.n; r++) {
    const sw = s[rowWindow[r]!]!, beta = rows.beta[r]!;
    for (let i = 0; i < 3; i++) {
      let v = sw * rows.lam[3 * r + i]! + beta * G * d[i]! - rows.y[3 * r + i]!;
      for (let j = 0; j < 3; j++) v -= rows.m[9 * r + 3 * i + j]! * ba[j]!;
      sse += v * v;
    }
  }
  return sse;
}

const dot3 = (a: ArrayLike<number>, ao: number, b: ArrayLike<number>, bo: number): number => a[ao]! * b[bo]! + a[ao + 1]! * b[bo + 1]! + a[ao + 2]! * b[bo + 2]!;

/**
 * `rowWindow[r]` = window index of row r; `s0` = starting scale per window. withBias false holds ba at zero.
 * Unknowns x = [gravity tangent (2), bias (3)] and one scale per window; the Jacobian of e_r is βG·b1, βG·b2 and −M_r
 * for x and λ_r for s_w, so with the sums of `jointSums`: B_w = [G·b·Σβλ, −ΣMᵀλ], D_w = prior + Σ|λ|²,
 * r_w = −Σλ·e, C = [[G²Σβ²·bᵀb, −G·bᵀΣβM], [·, ΣMᵀM]], r_x = −[G·bᵀΣβe, −ΣMᵀe] with Σβe and ΣMᵀe from the sums.
 * Σ|e|² (for σ²) comes from one pass over the rows at the last linearisation point.
 */
export function solveJoint(rows: AlignmentRows, rowWindow: Int32Array, s0: Float64Array, G: number, withBias: boolean, iterations = 6): JointResult | null {
  const nw = s0.length, nx = withBias ? 5 : 2;
  const s = Float64Array.from(s0, (v) => (Number.isFinite(v) && v > 0 ? v : 1));
  const d = Float64Array.of(0, 0, -1), ba = new Float64Array(3);
  const b1 = new Float64Array(3), b2 = new Float64Array(3);
  const D = new Float64Array(nw), B = new Float64Array(nw * nx), rs = new Float64Array(nw);
  const sLin = new Float64Array(nw), dLin = new Float64Array(3), baLin = new Float64Array(3);
  const S = jointSums(rows, rowWindow, nw);
  const be = new Float64Array(3), me = new Float64Array(3);
  let Sinv: Float64Array | null = null;
  for (let it = 0; it < iterations; it++) {
    basis(d, b1, b2);
    sLin.set(s);
    dLin.set(d);
    baLin.set(ba);
    windowTerms(S, s, d, ba, b1, b2, G, nx, D, B, rs, be, me);
    const C = new Float64Array(nx * nx), rx = new Float64Array(nx);
    runTerms(S, d, ba, b1, b2, G, nx, be, me, C, rx);
    schur(nw, nx, B, rs, D, C, rx);
    const sol = solveSpd(C, rx, nx);
    if (sol === null) return null;
    Sinv = sol.inv;
    const x = sol.x;
    updateScales(nw, nx, B, rs, D, x, s);
    for (let i = 0; i < 3; i++) d[i] = d[i]! + x[0]! * b1[i]! + x[1]! * b2[i]!;
    const n = Math.hypot(d[0]!, d[1]!, d[2]!);
    for (let i = 0; i < 3; i++) d[i] = d[i]! / n;
    if (withBias) for (let j = 0; j < 3; j++) ba[j] = ba[j]! + x[2 + j]!;
    // Converged (gravity direction and bias no longer move): the covariance from this pass stands.
    let moved = 0;
    for (let a = 0; a < nx; a++) moved = Math.max(moved, Math.abs(x[a]!));
    if (moved < 1e-8) break;
  }
  const sigma2 = sumSquares(rows, rowWindow, sLin, dLin, baLin, G) / Math.max(1, 3 * rows.n - nx - nw);
  const cv = (a: number, c: number) => Sinv![a * nx + c]! * sigma2;
  return {
    g: Float64Array.of(G * d[0]!, G * d[1]!, G * d[2]!),
    gCov: Float64Array.of(cv(0, 0) * G * G, cv(0, 1) * G * G, cv(1, 0) * G * G, cv(1, 1) * G * G),
    ba, baSigma: withBias ? Float64Array.of(Math.sqrt(cv(2, 2)), Math.sqrt(cv(3, 3)), Math.sqrt(cv(4, 4))) : new Float64Array(3),
    windowScale: s,
  };
}

const PRIOR = 1 / 0.25; // information of the weak σ = 0.5 prior on each window scale

/**
 * Per window: D_w, r_w and the coupling row B_w; and the window parts of Σβ·e and ΣMᵀ·e (Σ_w s_w·Σβλ, Σ_w s_w·ΣMᵀλ)
 * into be and me. The bias columns of B stay zero without the bias (nx = 2).
 */
function windowTerms(
  S: JointSums, s: Float64Array, d: Float64Array, ba: Float64Array, b1: Float64Array, b2: Float64Array, G: number, nx: number,
  D: Float64Array, B: Float64Array, rs: Float64Array, be: Float64Array, me: Float64Array,
): void {
  const { ll, lb, lm, ly } = S;
  const d0 = d[0]!, d1 = d[1]!, d2 = d[2]!, a0 = ba[0]!, a1 = ba[1]!, a2 = ba[2]!;
  const u0 = b1[0]!, u1 = b1[1]!, u2 = b1[2]!, v0 = b2[0]!, v1 = b2[1]!, v2 = b2[2]!;
  let be0 = 0, be1 = 0, be2 = 0, me0 = 0, me1 = 0, me2 = 0;
  for (let w = 0; w < D.length; w++) {
    const sw = s[w]!, o = 3 * w;
    const lb0 = lb[o]!, lb1 = lb[o + 1]!, lb2 = lb[o + 2]!, lm0 = lm[o]!, lm1 = lm[o + 1]!, lm2 = lm[o + 2]!;
    D[w] = PRIOR + ll[w]!;
    rs[w] = -(sw * ll[w]! + G * (d0 * lb0 + d1 * lb1 + d2 * lb2) - (lm0 * a0 + lm1 * a1 + lm2 * a2) - ly[w]!);
    B[w * nx] = G * (u0 * lb0 + u1 * lb1 + u2 * lb2);
    B[w * nx + 1] = G * (v0 * lb0 + v1 * lb1 + v2 * lb2);
    if (nx === 5) {
      B[w * nx + 2] = -lm0;
      B[w * nx + 3] = -lm1;
      B[w * nx + 4] = -lm2;
    }
    be0 += sw * lb0;
    be1 += sw * lb1;
    be2 += sw * lb2;
    me0 += sw * lm0;
    me1 += sw * lm1;
    me2 += sw * lm2;
  }
  be[0] = be0;
  be[1] = be1;
  be[2] = be2;
  me[0] = me0;
  me[1] = me1;
  me[2] = me2;
}

/**
 * The run part of the normal equations on x: completes Σβ·e and ΣMᵀ·e with the run sums, then
 * r_x = −[G·b1ᵀΣβe, G·b2ᵀΣβe, −ΣMᵀe] and C = [[G²Σβ²·bᵀb, −G·bᵀΣβM], [·, ΣMᵀM]].
 */
function runTerms(
  S: JointSums, d: Float64Array, ba: Float64Array, b1: Float64Array, b2: Float64Array, G: number, nx: number,
  be: Float64Array, me: Float64Array, C: Float64Array, rx: Float64Array,
): void {
  const bm = S.bm;
  for (let i = 0; i < 3; i++) {
    be[i] = be[i]! + G * S.bb * d[i]! - dot3(bm, 3 * i, ba, 0) - S.by[i]!;
    me[i] = me[i]! + G * (bm[i]! * d[0]! + bm[3 + i]! * d[1]! + bm[6 + i]! * d[2]!) - dot3(S.mm, 3 * i, ba, 0) - S.my[i]!;
  }
  rx[0] = -G * dot3(b1, 0, be, 0);
  rx[1] = -G * dot3(b2, 0, be, 0);
  C[0] = G * G * S.bb * dot3(b1, 0, b1, 0);
  C[1] = C[nx] = G * G * S.bb * dot3(b1, 0, b2, 0);
  C[nx + 1] = G * G * S.bb * dot3(b2, 0, b2, 0);
  if (nx !== 5) return;
  for (let j = 0; j < 3; j++) {
    rx[2 + j] = me[j]!;
    // (Σβ·M)ᵀ·b1 and (Σβ·M)ᵀ·b2, component j
    C[2 + j] = C[(2 + j) * nx] = -G * (bm[j]! * b1[0]! + bm[3 + j]! * b1[1]! + bm[6 + j]! * b1[2]!);
    C[nx + 2 + j] = C[(2 + j) * nx + 1] = -G * (bm[j]! * b2[0]! + bm[3 + j]! * b2[1]! + bm[6 + j]! * b2[2]!);
    for (let k = 0; k < 3; k++) C[(2 + j) * nx + 2 + k] = S.mm[3 * j + k]!;
  }
}

/** Schur complement on the window scales: (C − Σ BᵀB/D) x = rx − Σ Bᵀ rs/D. */
function schur(nw: number, nx: number, B: Float64Array, rs: Float64Array, D: Float64Array, C: Float64Array, rx: Float64Array): void {
  for (let w = 0; w < nw; w++) {
    for (let a = 0; a < nx; a++) {
      rx[a] = rx[a]! - (B[w * nx + a]! * rs[w]!) / D[w]!;
      for (let c = 0; c < nx; c++) C[a * nx + c] = C[a * nx + c]! - (B[w * nx + a]! * B[w * nx + c]!) / D[w]!;
    }
  }
}

/** Back-substitution of the window scales: s_w += (r_w − B_w·x)/D_w. */
function updateScales(nw: number, nx: number, B: Float64Array, rs: Float64Array, D: Float64Array, x: Float64Array, s: Float64Array): void {
  for (let w = 0; w < nw; w++) {
    let bx = 0;
    for (let a = 0; a < nx; a++) bx += B[w * nx + a]! * x[a]!;
    s[w] = s[w]! + (rs[w]! - bx) / D[w]!;
  }
}
