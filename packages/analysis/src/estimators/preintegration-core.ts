/**
 * The per-sample update of IMU preintegration, shared by the single-interval and the batch functions.
 * State lives in one preallocated object; the update allocates nothing.
 *
 * Method: C. Forster, L. Carlone, F. Dellaert, D. Scaramuzza, "On-Manifold Preintegration for Real-Time
 * Visual–Inertial Odometry", IEEE T-RO 33(1), 2017, §V–VI and Appendix. Two bookkeeping choices differ from the paper
 * and are converted back at the end of an interval (see `finish`): the rotation Jacobian is carried as
 * G = ΔR·∂ΔR/∂bg and the rotation error as a left perturbation in the keyframe-i frame, which makes every per-sample
 * term a cross product with u = ΔR·a·h instead of a 3×3 matrix product (same first-order model).
 */
import { so3 } from '@plumbline/geometry';

export interface PreState {
  dt: number;
  /** ΔR, row-major 3×3 (IMU frame at keyframe i ← IMU frame at the current time). */
  r: Float64Array;
  v: Float64Array;
  p: Float64Array;
  /** 9×9 covariance of [δθ (left, frame i), δv, δp], row-major. */
  cov: Float64Array;
  /** G = ΔR·∂ΔR/∂bg (left form), ∂Δv/∂bg, ∂Δv/∂ba, ∂Δp/∂bg, ∂Δp/∂ba, row-major 3×3 each. */
  g: Float64Array;
  vbg: Float64Array;
  vba: Float64Array;
  pbg: Float64Array;
  pba: Float64Array;
  /** Propagate the covariance (skipped when nobody reads it; the increments and Jacobians are unaffected). */
  covariance: boolean;
  /** Scratch. */
  s9: Float64Array;
}

export function createState(): PreState {
  const st: PreState = {
    dt: 0,
    r: new Float64Array(9),
    v: new Float64Array(3),
    p: new Float64Array(3),
    cov: new Float64Array(81),
    g: new Float64Array(9),
    vbg: new Float64Array(9),
    vba: new Float64Array(9),
    pbg: new Float64Array(9),
    pba: new Float64Array(9),
    covariance: true,
    s9: new Float64Array(9),
  };
  resetState(st);
  return st;
}

export function resetState(st: PreState): void {
  st.dt = 0;
  st.r.fill(0);
  st.r[0] = st.r[4] = st.r[8] = 1;
  st.v.fill(0);
  st.p.fill(0);
  st.cov.fill(0);
  st.g.fill(0);
  st.vbg.fill(0);
  st.vba.fill(0);
  st.pbg.fill(0);
  st.pba.fill(0);
}

/**
 * One integration step of length h (s) with bias-corrected angular rate w (rad/s) and specific force a (m/s²),
 * both in the IMU frame and held constant over the step. qg = σg² (rad²/s), qa = σa² (m²/s³): squared noise densities.
 */
export function step(st: PreState, wx: number, wy: number, wz: number, ax: number, ay: number, az: number, h: number, qg: number, qa: number): void {
  const r = st.r;
  // u = ΔR a h: the velocity increment in frame i.
  const ux = (r[0]! * ax + r[1]! * ay + r[2]! * az) * h;
  const uy = (r[3]! * ax + r[4]! * ay + r[5]! * az) * h;
  const uz = (r[6]! * ax + r[7]! * ay + r[8]! * az) * h;
  if (st.covariance) propagateCovariance(st.cov, ux, uy, uz, h, qg, qa);
  updateJacobians(st, ux, uy, uz, h);
  // Position and velocity (Forster eq. 33 in frame i), then rotation ΔR ← ΔR Exp(w h).
  const v = st.v, p = st.p;
  p[0] = p[0]! + v[0]! * h + 0.5 * ux * h;
  p[1] = p[1]! + v[1]! * h + 0.5 * uy * h;
  p[2] = p[2]! + v[2]! * h + 0.5 * uz * h;
  v[0] = v[0]! + ux;
  v[1] = v[1]! + uy;
  v[2] = v[2]! + uz;
  rotateRight(st, wx * h, wy * h, wz * h, h);
  st.dt += h;
}

/** G ← G − ΔR·Jl(φ)·h with the pre-update ΔR (since Exp(φ)·Jr(φ) = Jl(φ)), then ΔR ← ΔR·Exp(φ). */
function rotateRight(st: PreState, x: number, y: number, z: number, hh: number): void {
  const t2 = x * x + y * y + z * z;
  const t = Math.sqrt(t2);
  let sb: number, sc: number, jb: number, jc: number;
  if (t < 1e-4) {
    sb = 1 - t2 / 6;
    sc = 0.5 - t2 / 24;
    jb = 0.5 - t2 / 24;
    jc = 1 / 6 - t2 / 120;
  } else {
    const s = Math.sin(t), c = Math.cos(t);
    sb = s / t;
    sc = (1 - c) / t2;
    jb = sc;
    jc = (t - s) / (t2 * t);
  }
  const e = st.s9;
  // Exp(φ) = I + sb[φ]× + sc[φ]×²; Jl(φ) = I + jb[φ]× + jc[φ]×². Build Jl first, use it, then Exp.
  so3.hatPolynomial(e, x, y, z, 1, jb, jc);
  const r = st.r, g = st.g;
  for (let i = 0; i < 3; i++) {
    const r0 = r[i * 3]!, r1 = r[i * 3 + 1]!, r2 = r[i * 3 + 2]!;
    for (let j = 0; j < 3; j++) g[i * 3 + j] = g[i * 3 + j]! - (r0 * e[j]! + r1 * e[3 + j]! + r2 * e[6 + j]!) * hh;
  }
  so3.hatPolynomial(e, x, y, z, 1, sb, sc);
  for (let i = 0; i < 3; i++) {
    const r0 = r[i * 3]!, r1 = r[i * 3 + 1]!, r2 = r[i * 3 + 2]!;
    r[i * 3] = r0 * e[0]! + r1 * e[3]! + r2 * e[6]!;
    r[i * 3 + 1] = r0 * e[1]! + r1 * e[4]! + r2 * e[7]!;
    r[i * 3 + 2] = r0 * e[2]! + r1 * e[5]! + r2 * e[8]!;
  }
}


/**
 * Bias Jacobians before the state update (Forster Appendix B, in the left form):
 * ∂Δp/∂b += ∂Δv/∂b·h − ½[u]×G·h, ∂Δv/∂bg −= [u]×G, ∂Δv/∂ba −= ΔR h, ∂Δp/∂ba −= ½ΔR h².
 */
function updateJacobians(st: PreState, ux: number, uy: number, uz: number, h: number): void {
  const g = st.g, vbg = st.vbg, vba = st.vba, pbg = st.pbg, pba = st.pba, r = st.r;
  for (let j = 0; j < 3; j++) {
    const g0 = g[j]!, g1 = g[3 + j]!, g2 = g[6 + j]!;
    // c = u × G[:, j]
    const c0 = uy * g2 - uz * g1;
    const c1 = uz * g0 - ux * g2;
    const c2 = ux * g1 - uy * g0;
    pbg[j] = pbg[j]! + vbg[j]! * h - 0.5 * c0 * h;
    pbg[3 + j] = pbg[3 + j]! + vbg[3 + j]! * h - 0.5 * c1 * h;
    pbg[6 + j] = pbg[6 + j]! + vbg[6 + j]! * h - 0.5 * c2 * h;
    vbg[j] = vbg[j]! - c0;
    vbg[3 + j] = vbg[3 + j]! - c1;
    vbg[6 + j] = vbg[6 + j]! - c2;
  }
  const hh = 0.5 * h * h;
  for (let k = 0; k < 9; k++) {
    pba[k] = pba[k]! + vba[k]! * h - r[k]! * hh;
    vba[k] = vba[k]! - r[k]! * h;
  }
}

/**
 * P ← A P Aᵀ + Q with A = [[I,0,0],[C,I,0],[½hC,hI,I]], C = −[u]× (error dynamics in frame i). Cost: two passes of
 * nine cross products plus additions, instead of a dense 9×9 triple product.
 */
function propagateCovariance(P: Float64Array, ux: number, uy: number, uz: number, h: number, qg: number, qa: number): void {
  // Rows: T_v = P_v + C P_θ, T_p = P_p + h P_v + ½h C P_θ (C x = −u × x = x × u).
  for (let col = 0; col < 9; col++) {
    const t0 = P[col]!, t1 = P[9 + col]!, t2 = P[18 + col]!;
    const y0 = t1 * uz - t2 * uy;
    const y1 = t2 * ux - t0 * uz;
    const y2 = t0 * uy - t1 * ux;
    const v0 = P[27 + col]!, v1 = P[36 + col]!, v2 = P[45 + col]!;
    P[27 + col] = v0 + y0;
    P[36 + col] = v1 + y1;
    P[45 + col] = v2 + y2;
    P[54 + col] = P[54 + col]! + h * v0 + 0.5 * h * y0;
    P[63 + col] = P[63 + col]! + h * v1 + 0.5 * h * y1;
    P[72 + col] = P[72 + col]! + h * v2 + 0.5 * h * y2;
  }
  // Columns: same on the transposed side.
  for (let row = 0; row < 9; row++) {
    const o = row * 9;
    const t0 = P[o]!, t1 = P[o + 1]!, t2 = P[o + 2]!;
    const y0 = t1 * uz - t2 * uy;
    const y1 = t2 * ux - t0 * uz;
    const y2 = t0 * uy - t1 * ux;
    const v0 = P[o + 3]!, v1 = P[o + 4]!, v2 = P[o + 5]!;
    P[o + 3] = v0 + y0;
    P[o + 4] = v1 + y1;
    P[o + 5] = v2 + y2;
    P[o + 6] = P[o + 6]! + h * v0 + 0.5 * h * y0;
    P[o + 7] = P[o + 7]! + h * v1 + 0.5 * h * y1;
    P[o + 8] = P[o + 8]! + h * v2 + 0.5 * h * y2;
  }
  // White-noise inputs (isotropic, so rotating them by ΔR changes nothing): δθ += ΔR ηg h, δv += ΔR ηa h,
  // δp += ½ΔR ηa h², with discrete variances σ²/h.
  const tg = qg * h, tv = qa * h, tvp = 0.5 * qa * h * h, tp = 0.25 * qa * h * h * h;
  for (let k = 0; k < 3; k++) {
    P[k * 10] = P[k * 10]! + tg;
    P[(3 + k) * 10] = P[(3 + k) * 10]! + tv;
    P[(6 + k) * 10] = P[(6 + k) * 10]! + tp;
    P[(3 + k) * 9 + 6 + k] = P[(3 + k) * 9 + 6 + k]! + tvp;
    P[(6 + k) * 9 + 3 + k] = P[(6 + k) * 9 + 3 + k]! + tvp;
  }
}

/**
 * Converts the bookkeeping to Forster's conventions in place: ∂ΔR/∂bg = ΔRᵀG (right form) into `g`, and the
 * rotation block of the covariance to a right perturbation in the frame of keyframe j (δφ = ΔRᵀ δθ).
 */
export function finish(st: PreState): void {
  const r = st.r, g = st.g, e = st.s9;
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++) e[i * 3 + j] = r[i]! * g[j]! + r[3 + i]! * g[3 + j]! + r[6 + i]! * g[6 + j]!;
  g.set(e);
  // cov' = T cov Tᵀ with T = blockdiag(ΔRᵀ, I, I).
  const P = st.cov;
  for (let col = 0; col < 9; col++) {
    const a = P[col]!, b = P[9 + col]!, c = P[18 + col]!;
    P[col] = r[0]! * a + r[3]! * b + r[6]! * c;
    P[9 + col] = r[1]! * a + r[4]! * b + r[7]! * c;
    P[18 + col] = r[2]! * a + r[5]! * b + r[8]! * c;
  }
  for (let row = 0; row < 9; row++) {
    const o = row * 9;
    const a = P[o]!, b = P[o + 1]!, c = P[o + 2]!;
    P[o] = r[0]! * a + r[3]! * b + r[6]! * c;
    P[o + 1] = r[1]! * a + r[4]! * b + r[7]! * c;
    P[o + 2] = r[2]! * a + r[5]! * b + r[8]! * c;
  }
}
