/**
 * Run-level joint alignment: one scale per window (rows assigned to the nearest window centre), one gravity on the
 * sphere (2-DOF tangent update) and an accelerometer bias per segment of the run (a random walk between segments;
 * one segment is the single run-level bias), solved by Gauss–Newton with the per-window scales eliminated by the Schur
 * complement, so the cost is O(rows + segments³) for any run length. Same rows and model as
 * alignment-rows.ts (Mur-Artal & Tardós, IEEE RA-L 2017; tangent-space gravity of Qin & Shen, IEEE T-RO 2018).
 * A weak prior (σ = 0.5) on each window scale keeps windows without acceleration excitation from going singular.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { solveSpd, solveSpdInto } from './small-math.ts';

export interface JointResult {
  g: Float64Array;
  /** 2×2 covariance of the gravity tangent update, (m/s²)². */
  gCov: Float64Array;
  /** Accelerometer bias per segment (stride 3) and its 1-sigma per axis. */
  ba: Float64Array;
  baSigma: Float64Array;
  /** Mean of the segment biases weighted by their row counts, with its 1-sigma per axis. */
  baMean: Float64Array;
  baMeanSigma: Float64Array;
  windowScale: Float64Array;
}

/** Bias segments: the segment of each window (segments are unions of whole windows) and the random-walk prior. */
export interface BiasSegments {
  /** Segment index per window, non-decreasing, 0..count−1. */
  ofWindow: Int32Array;
  count: number;
  /** Information (1/σ²) per axis of the change between segment k and k+1 (length count−1), (m/s²)⁻². */
  stepInfo: Float64Array;
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
 * Sums over the rows that the normal equations need, per window (w), per bias segment (k) and over the run; the
 * residual e_r = s_w·λ_r + β_r·G·d − M_r·ba_k − y_r is linear in (s, G·d, ba), so these fixed sums give every
 * iteration's normal equations in O(windows + segments²) instead of O(rows).
 */
interface JointSums {
  /** Per window: Σ|λ|², Σβλ (stride 3), Σ Mᵀλ (stride 3), Σ λ·y. */
  ll: Float64Array;
  lb: Float64Array;
  lm: Float64Array;
  ly: Float64Array;
  /** Over the run: Σβ², Σ β·y. */
  bb: number;
  by: Float64Array;
  /** Per segment: Σ β·M (3×3, stride 9), Σ MᵀM (3×3, stride 9), Σ Mᵀy (stride 3), row count. */
  bm: Float64Array;
  mm: Float64Array;
  my: Float64Array;
  rows: Float64Array;
}

function jointSums(rows: AlignmentRows, rowWindow: Int32Array, nw: number, seg: BiasSegments): JointSums {
  const ns = seg.count;
  const S: JointSums = {
    ll: new Float64Array(nw), lb: new Float64Array(3 * nw), lm: new Float64Array(3 * nw), ly: new Float64Array(nw),
    bb: 0, by: new Float64Array(3), bm: new Float64Array(9 * ns), mm: new Float64Array(9 * ns), my: new Float64Array(3 * ns), rows: new Float64Array(ns),
  };
  const { lam, y, m } = rows;
  for (let r = 0; r < rows.n; r++) {
    const w = rowWindow[r]!, beta = rows.beta[r]!, o = 3 * r, q = 9 * r, k = seg.ofWindow[w]!, k9 = 9 * k, k3 = 3 * k;
    const l0 = lam[o]!, l1 = lam[o + 1]!, l2 = lam[o + 2]!, y0 = y[o]!, y1 = y[o + 1]!, y2 = y[o + 2]!;
    S.ll[w] = S.ll[w]! + (l0 * l0 + l1 * l1 + l2 * l2);
    S.ly[w] = S.ly[w]! + (l0 * y0 + l1 * y1 + l2 * y2);
    S.bb += beta * beta;
    S.rows[k] = S.rows[k]! + 1;
    for (let i = 0; i < 3; i++) {
      S.lb[3 * w + i] = S.lb[3 * w + i]! + beta * lam[o + i]!;
      S.by[i] = S.by[i]! + beta * y[o + i]!;
      // column i of M_r
      const c0 = m[q + i]!, c1 = m[q + 3 + i]!, c2 = m[q + 6 + i]!;
      S.lm[3 * w + i] = S.lm[3 * w + i]! + (l0 * c0 + l1 * c1 + l2 * c2);
      S.my[k3 + i] = S.my[k3 + i]! + (y0 * c0 + y1 * c1 + y2 * c2);
      for (let j = 0; j < 3; j++) {
        S.bm[k9 + 3 * j + i] = S.bm[k9 + 3 * j + i]! + beta * m[q + 3 * j + i]!;
        S.mm[k9 + 3 * i + j] = S.mm[k9 + 3 * i + j]! + (c0 * m[q + j]! + c1 * m[q + 3 + j]! + c2 * m[q + 6 + j]!);
      }
    }
  }
  return S;
}

/** Σ|e_r|² over the rows at (s, d, ba per segment). */
function sumSquares(rows: AlignmentRows, rowWindow: Int32Array, seg: BiasSegments, s: Float64Array, d: Float64Array, ba: Float64Array, G: number): number {
  let sse = 0;
  for (let r = 0; r < rows.n; r++) {
    const w = rowWindow[r]!, sw = s[w]!, beta = rows.beta[r]!, k3 = 3 * seg.ofWindow[w]!;
    for (let i = 0; i < 3; i++) {
      let v = sw * rows.lam[3 * r + i]! + beta * G * d[i]! - rows.y[3 * r + i]!;
      for (let j = 0; j < 3; j++) v -= rows.m[9 * r + 3 * i + j]! * ba[k3 + j]!;
      sse += v * v;
    }
  }
  return sse;
}

const dot3 = (a: ArrayLike<number>, ao: number, b: ArrayLike<number>, bo: number): number => a[ao]! * b[bo]! + a[ao + 1]! * b[bo + 1]! + a[ao + 2]! * b[bo + 2]!;

/** One segment holding the whole run (the single run-level bias). */
export function oneSegment(nw: number): BiasSegments {
  return { ofWindow: new Int32Array(nw), count: 1, stepInfo: new Float64Array(0) };
}

/**
 * `rowWindow[r]` = window index of row r; `s0` = starting scale per window. withBias false holds ba at zero.
 * Unknowns x = [gravity tangent (2), bias per segment (3 each)] and one scale per window; the Jacobian of e_r is
 * βG·b1, βG·b2 and −M_r (on the bias of the row's segment k) for x and λ_r for s_w, so with the sums of `jointSums`:
 * B_w = [G·b·Σβλ, −ΣMᵀλ], D_w = prior + Σ|λ|², r_w = −Σλ·e, C = [[G²Σβ²·bᵀb, −G·bᵀΣ_kβM], [·, ΣMᵀM per k]],
 * r_x = −[G·bᵀΣβe, −ΣMᵀe per k]. Between consecutive segments the bias is a random walk: the prior
 * ½·Σ_k info_k·|ba_{k+1} − ba_k|² adds a block-tridiagonal term (a discretised random-walk bias as in inertial
 * preintegration, Forster et al., IEEE T-RO 2017). Σ|e|² (for σ²) comes from one pass over the rows at the last
 * linearisation point.
 */
export function solveJoint(
  rows: AlignmentRows, rowWindow: Int32Array, s0: Float64Array, G: number, withBias: boolean, seg: BiasSegments = oneSegment(s0.length), iterations = 6,
): JointResult | null {
  const nw = s0.length, ns = withBias ? seg.count : 1, nx = withBias ? 2 + 3 * ns : 2;
  const s = Float64Array.from(s0, (v) => (Number.isFinite(v) && v > 0 ? v : 1));
  const d = Float64Array.of(0, 0, -1), ba = new Float64Array(3 * ns);
  const b1 = new Float64Array(3), b2 = new Float64Array(3);
  const D = new Float64Array(nw), B = new Float64Array(nw * 5), rs = new Float64Array(nw);
  const sLin = new Float64Array(nw), dLin = new Float64Array(3), baLin = new Float64Array(3 * ns);
  const S = jointSums(rows, rowWindow, nw, seg);
  const be = new Float64Array(3), me = new Float64Array(3 * ns);
  const C = new Float64Array(nx * nx), rx = new Float64Array(nx), x = new Float64Array(nx), L = new Float64Array(nx * nx);
  let Sinv: Float64Array | null = null;
  for (let it = 0; it < iterations; it++) {
    basis(d, b1, b2);
    sLin.set(s);
    dLin.set(d);
    baLin.set(ba);
    windowTerms(S, seg, s, d, ba, b1, b2, G, withBias, D, B, rs, be, me);
    C.fill(0);
    rx.fill(0);
    runTerms(S, seg, d, ba, b1, b2, G, nx, be, me, C, rx);
    schur(nw, nx, seg, withBias, B, rs, D, C, rx);
    // The inverse (covariance) only where the iterations stop.
    const last = it === iterations - 1;
    if (!solveSpdInto(x, L, C, rx, nx)) return null;
    let moved = 0;
    for (let a = 0; a < nx; a++) moved = Math.max(moved, Math.abs(x[a]!));
    if (last || moved < 1e-8) {
      const sol = solveSpd(C, rx, nx);
      if (sol === null) return null;
      Sinv = sol.inv;
    }
    updateScales(nw, nx, seg, withBias, B, rs, D, x, s);
    for (let i = 0; i < 3; i++) d[i] = d[i]! + x[0]! * b1[i]! + x[1]! * b2[i]!;
    const n = Math.hypot(d[0]!, d[1]!, d[2]!);
    for (let i = 0; i < 3; i++) d[i] = d[i]! / n;
    if (withBias) for (let j = 0; j < 3 * ns; j++) ba[j] = ba[j]! + x[2 + j]!;
    // Converged (gravity direction and bias no longer move): the covariance from this pass stands.
    if (moved < 1e-8) break;
  }
  const sigma2 = sumSquares(rows, rowWindow, withBias ? seg : oneSegment(nw), sLin, dLin, withBias ? baLin : new Float64Array(3 * seg.count), G) / Math.max(1, 3 * rows.n - nx - nw);
  const cv = (a: number, c: number) => Sinv![a * nx + c]! * sigma2;
  const baSigma = new Float64Array(3 * ns), baMean = new Float64Array(3), baMeanSigma = new Float64Array(3);
  if (withBias) {
    let total = 0;
    for (let k = 0; k < ns; k++) total += S.rows[k]!;
    for (let j = 0; j < 3; j++) {
      let v = 0, var2 = 0;
      for (let k = 0; k < ns; k++) {
        const wk = S.rows[k]! / total;
        baSigma[3 * k + j] = Math.sqrt(cv(2 + 3 * k + j, 2 + 3 * k + j));
        v += wk * ba[3 * k + j]!;
        for (let l = 0; l < ns; l++) var2 += wk * (S.rows[l]! / total) * cv(2 + 3 * k + j, 2 + 3 * l + j);
      }
      baMean[j] = v;
      baMeanSigma[j] = Math.sqrt(Math.max(0, var2));
    }
  }
  return {
    g: Float64Array.of(G * d[0]!, G * d[1]!, G * d[2]!),
    gCov: Float64Array.of(cv(0, 0) * G * G, cv(0, 1) * G * G, cv(1, 0) * G * G, cv(1, 1) * G * G),
    ba, baSigma, baMean, baMeanSigma,
    windowScale: s,
  };
}

const PRIOR = 1 / 0.25; // information of the weak σ = 0.5 prior on each window scale

/**
 * Per window: D_w, r_w and the coupling row B_w (stride 5: gravity tangent, then the bias of the window's segment);
 * and the window parts of Σβ·e and ΣMᵀ·e (Σ_w s_w·Σβλ into be, Σ_w s_w·ΣMᵀλ into me of the segment). The bias
 * columns of B stay zero without the bias.
 */
function windowTerms(
  S: JointSums, seg: BiasSegments, s: Float64Array, d: Float64Array, ba: Float64Array, b1: Float64Array, b2: Float64Array, G: number, withBias: boolean,
  D: Float64Array, B: Float64Array, rs: Float64Array, be: Float64Array, me: Float64Array,
): void {
  const { ll, lb, lm, ly } = S;
  const d0 = d[0]!, d1 = d[1]!, d2 = d[2]!;
  const u0 = b1[0]!, u1 = b1[1]!, u2 = b1[2]!, v0 = b2[0]!, v1 = b2[1]!, v2 = b2[2]!;
  let be0 = 0, be1 = 0, be2 = 0;
  me.fill(0);
  for (let w = 0; w < D.length; w++) {
    const sw = s[w]!, o = 3 * w, k3 = withBias ? 3 * seg.ofWindow[w]! : 0;
    const lb0 = lb[o]!, lb1 = lb[o + 1]!, lb2 = lb[o + 2]!, lm0 = lm[o]!, lm1 = lm[o + 1]!, lm2 = lm[o + 2]!;
    D[w] = PRIOR + ll[w]!;
    rs[w] = -(sw * ll[w]! + G * (d0 * lb0 + d1 * lb1 + d2 * lb2) - (lm0 * ba[k3]! + lm1 * ba[k3 + 1]! + lm2 * ba[k3 + 2]!) - ly[w]!);
    B[w * 5] = G * (u0 * lb0 + u1 * lb1 + u2 * lb2);
    B[w * 5 + 1] = G * (v0 * lb0 + v1 * lb1 + v2 * lb2);
    if (withBias) {
      B[w * 5 + 2] = -lm0;
      B[w * 5 + 3] = -lm1;
      B[w * 5 + 4] = -lm2;
      me[k3] = me[k3]! + sw * lm0;
      me[k3 + 1] = me[k3 + 1]! + sw * lm1;
      me[k3 + 2] = me[k3 + 2]! + sw * lm2;
    }
    be0 += sw * lb0;
    be1 += sw * lb1;
    be2 += sw * lb2;
  }
  be[0] = be0;
  be[1] = be1;
  be[2] = be2;
}

/**
 * The run part of the normal equations on x: completes Σβ·e and ΣMᵀ·e (per segment) with the run and segment sums,
 * then r_x = −[G·b1ᵀΣβe, G·b2ᵀΣβe, −ΣMᵀe per segment] and C = [[G²Σβ²·bᵀb, −G·bᵀΣβM per segment], [·, ΣMᵀM]],
 * plus the random-walk prior between consecutive segments.
 */
function runTerms(
  S: JointSums, seg: BiasSegments, d: Float64Array, ba: Float64Array, b1: Float64Array, b2: Float64Array, G: number, nx: number,
  be: Float64Array, me: Float64Array, C: Float64Array, rx: Float64Array,
): void {
  const ns = (nx - 2) / 3;
  for (let i = 0; i < 3; i++) {
    // Σ_k (Σβ·M)_k·ba_k (without the bias, ba is zero)
    let bmba = 0;
    for (let k = 0; k < ns; k++) bmba += dot3(S.bm, 9 * k + 3 * i, ba, 3 * k);
    be[i] = be[i]! + G * S.bb * d[i]! - bmba - S.by[i]!;
  }
  for (let k = 0; k < ns; k++) {
    const k9 = 9 * k, k3 = 3 * k;
    for (let i = 0; i < 3; i++) {
      me[k3 + i] = me[k3 + i]! + G * (S.bm[k9 + i]! * d[0]! + S.bm[k9 + 3 + i]! * d[1]! + S.bm[k9 + 6 + i]! * d[2]!) - dot3(S.mm, k9 + 3 * i, ba, k3) - S.my[k3 + i]!;
    }
  }
  rx[0] = -G * dot3(b1, 0, be, 0);
  rx[1] = -G * dot3(b2, 0, be, 0);
  C[0] = G * G * S.bb * dot3(b1, 0, b1, 0);
  C[1] = C[nx] = G * G * S.bb * dot3(b1, 0, b2, 0);
  C[nx + 1] = G * G * S.bb * dot3(b2, 0, b2, 0);
  for (let k = 0; k < ns; k++) {
    const k9 = 9 * k, c = 2 + 3 * k, bm = S.bm;
    for (let j = 0; j < 3; j++) {
      rx[c + j] = me[3 * k + j]!;
      // (Σβ·M)ᵀ·b1 and (Σβ·M)ᵀ·b2, component j
      C[c + j] = C[(c + j) * nx] = -G * (bm[k9 + j]! * b1[0]! + bm[k9 + 3 + j]! * b1[1]! + bm[k9 + 6 + j]! * b1[2]!);
      C[nx + c + j] = C[(c + j) * nx + 1] = -G * (bm[k9 + j]! * b2[0]! + bm[k9 + 3 + j]! * b2[1]! + bm[k9 + 6 + j]! * b2[2]!);
      for (let l = 0; l < 3; l++) C[(c + j) * nx + c + l] = S.mm[k9 + 3 * j + l]!;
    }
  }
  // Random walk between segments: cost ½·info·|ba_{k+1} − ba_k|² per axis.
  for (let k = 0; k + 1 < ns; k++) {
    const p = seg.stepInfo[k]!, a = 2 + 3 * k, b = a + 3;
    for (let j = 0; j < 3; j++) {
      const diff = ba[3 * k + 3 + j]! - ba[3 * k + j]!;
      rx[a + j] = rx[a + j]! + p * diff;
      rx[b + j] = rx[b + j]! - p * diff;
      C[(a + j) * nx + a + j] = C[(a + j) * nx + a + j]! + p;
      C[(b + j) * nx + b + j] = C[(b + j) * nx + b + j]! + p;
      C[(a + j) * nx + b + j] = C[(a + j) * nx + b + j]! - p;
      C[(b + j) * nx + a + j] = C[(b + j) * nx + a + j]! - p;
    }
  }
}

/** Column of x for entry a (0..4) of window w's coupling row. */
const colOf = (a: number, k3: number): number => (a < 2 ? a : 2 + k3 + (a - 2));

/** Schur complement on the window scales: (C − Σ BᵀB/D) x = rx − Σ Bᵀ rs/D. */
function schur(nw: number, nx: number, seg: BiasSegments, withBias: boolean, B: Float64Array, rs: Float64Array, D: Float64Array, C: Float64Array, rx: Float64Array): void {
  const na = withBias ? 5 : 2;
  for (let w = 0; w < nw; w++) {
    const k3 = withBias ? 3 * seg.ofWindow[w]! : 0, o = w * 5, dw = D[w]!;
    for (let a = 0; a < na; a++) {
      const ca = colOf(a, k3);
      rx[ca] = rx[ca]! - (B[o + a]! * rs[w]!) / dw;
      for (let c = 0; c < na; c++) {
        const cc = colOf(c, k3);
        C[ca * nx + cc] = C[ca * nx + cc]! - (B[o + a]! * B[o + c]!) / dw;
      }
    }
  }
}

/** Back-substitution of the window scales: s_w += (r_w − B_w·x)/D_w. */
function updateScales(nw: number, nx: number, seg: BiasSegments, withBias: boolean, B: Float64Array, rs: Float64Array, D: Float64Array, x: Float64Array, s: Float64Array): void {
  const na = withBias ? 5 : 2;
  for (let w = 0; w < nw; w++) {
    const k3 = withBias ? 3 * seg.ofWindow[w]! : 0;
    let bx = 0;
    for (let a = 0; a < na; a++) bx += B[w * 5 + a]! * x[colOf(a, k3)]!;
    s[w] = s[w]! + (rs[w]! - bx) / D[w]!;
  }
}
