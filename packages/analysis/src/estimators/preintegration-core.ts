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
import type { ImuColumns } from '@plumbline/bundle';

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
 * Integrates [ta, tb] into `st` starting at sample j (t_j ≤ ta). Returns the index to start the next interval from,
 * or −1 when a gap or the end of the data breaks the interval. Each IMU sample interval is one step with the mean of
 * the linearly interpolated, bias-corrected rate ω (rad/s) and specific force a (m/s²) over the part of it inside
 * [ta, tb]. qg = σg² (rad²/s), qa = σa² (m²/s³): squared noise densities (covariance only).
 *
 * Per step, in frame i with u = ΔR a h: bias Jacobians with the pre-update state (Forster Appendix B, left form)
 * ∂Δp/∂bg += ∂Δv/∂bg·h − ½[u]×G·h, ∂Δv/∂bg −= [u]×G, ∂Δp/∂ba += ∂Δv/∂ba·h − ½ΔR h², ∂Δv/∂ba −= ΔR h; then
 * Δp += Δv h + ½u h, Δv += u (eq. 33); then G ← G − ΔR·Jl(φ)·h (Exp(φ)·Jr(φ) = Jl(φ)) and ΔR ← ΔR·Exp(φ), φ = ω h.
 * Exp(φ) = I + sb[φ]× + sc[φ]×² and Jl(φ) = I + jb[φ]× + jc[φ]×² share A = ΔR[φ]× and B = A[φ]× (row i of A is
 * r_i × φ), so both products cost two cross products per row. The coefficients are Taylor series below 0.02 rad (the
 * per-sample angle of any IMU faster than 50 Hz at ≤ 1 rad/s; truncation below 1e-18, and no cancellation in
 * (t − sin t)/t³), closed form above.
 * The state lives in local variables for the whole interval (written back at the end): the per-sample update then
 * touches no memory but the IMU columns, about three times faster than updating the state arrays in place.
 */
export function integrateRange(
  st: PreState, imu: ImuColumns, j: number, ta: number, tb: number,
  bg: ArrayLike<number>, ba: ArrayLike<number>, qg: number, qa: number, maxGap: number,
): number {
  const t = imu.t, gx = imu.gx, gy = imu.gy, gz = imu.gz, ax = imu.ax, ay = imu.ay, az = imu.az, n = imu.n;
  const bgx = bg[0]!, bgy = bg[1]!, bgz = bg[2]!, bax = ba[0]!, bay = ba[1]!, baz = ba[2]!;
  const cov = st.covariance ? st.cov : null;
  const RS = st.r;
  const GS = st.g;
  const VBGS = st.vbg;
  const PBGS = st.pbg;
  const VBAS = st.vba;
  const PBAS = st.pba;
  const VS = st.v;
  const PS = st.p;
  let r0 = RS[0]!, r1 = RS[1]!, r2 = RS[2]!, r3 = RS[3]!, r4 = RS[4]!, r5 = RS[5]!, r6 = RS[6]!, r7 = RS[7]!, r8 = RS[8]!;
  let g0 = GS[0]!, g1 = GS[1]!, g2 = GS[2]!, g3 = GS[3]!, g4 = GS[4]!, g5 = GS[5]!, g6 = GS[6]!, g7 = GS[7]!, g8 = GS[8]!;
  let vg0 = VBGS[0]!, vg1 = VBGS[1]!, vg2 = VBGS[2]!, vg3 = VBGS[3]!, vg4 = VBGS[4]!, vg5 = VBGS[5]!, vg6 = VBGS[6]!, vg7 = VBGS[7]!, vg8 = VBGS[8]!;
  let pg0 = PBGS[0]!, pg1 = PBGS[1]!, pg2 = PBGS[2]!, pg3 = PBGS[3]!, pg4 = PBGS[4]!, pg5 = PBGS[5]!, pg6 = PBGS[6]!, pg7 = PBGS[7]!, pg8 = PBGS[8]!;
  let va0 = VBAS[0]!, va1 = VBAS[1]!, va2 = VBAS[2]!, va3 = VBAS[3]!, va4 = VBAS[4]!, va5 = VBAS[5]!, va6 = VBAS[6]!, va7 = VBAS[7]!, va8 = VBAS[8]!;
  let pa0 = PBAS[0]!, pa1 = PBAS[1]!, pa2 = PBAS[2]!, pa3 = PBAS[3]!, pa4 = PBAS[4]!, pa5 = PBAS[5]!, pa6 = PBAS[6]!, pa7 = PBAS[7]!, pa8 = PBAS[8]!;
  let v0 = VS[0]!, v1 = VS[1]!, v2 = VS[2]!;
  let p0 = PS[0]!, p1 = PS[1]!, p2 = PS[2]!;
  let dt = st.dt, s0 = ta, next = j;
  while (s0 < tb) {
    if (next + 1 >= n) {
      next = -1;
      break;
    }
    const tj = t[next]!, tk = t[next + 1]!, span = tk - tj;
    if (!(span > 0) || span > maxGap) {
      next = -1;
      break;
    }
    const s1 = tk < tb ? tk : tb;
    const h = s1 - s0;
    if (h > 0) {
      // Mean of the linear interpolant over [s0, s1], bias-corrected.
      const f = (0.5 * (s0 + s1) - tj) / span, e = 1 - f;
      const wx = e * gx[next]! + f * gx[next + 1]! - bgx;
      const wy = e * gy[next]! + f * gy[next + 1]! - bgy;
      const wz = e * gz[next]! + f * gz[next + 1]! - bgz;
      const fx = e * ax[next]! + f * ax[next + 1]! - bax;
      const fy = e * ay[next]! + f * ay[next + 1]! - bay;
      const fz = e * az[next]! + f * az[next + 1]! - baz;
      // u = ΔR a h: the velocity increment in frame i.
      const ux = (r0 * fx + r1 * fy + r2 * fz) * h;
      const uy = (r3 * fx + r4 * fy + r5 * fz) * h;
      const uz = (r6 * fx + r7 * fy + r8 * fz) * h;
      if (cov !== null) propagateCovariance(cov, ux, uy, uz, h, qg, qa);
      // Bias Jacobians with the pre-update state: c = u × G[:, j]; ∂Δp/∂bg += ∂Δv/∂bg·h − ½c·h, ∂Δv/∂bg −= c.
      const c00 = uy * g6 - uz * g3, c10 = uz * g0 - ux * g6, c20 = ux * g3 - uy * g0;
      const c01 = uy * g7 - uz * g4, c11 = uz * g1 - ux * g7, c21 = ux * g4 - uy * g1;
      const c02 = uy * g8 - uz * g5, c12 = uz * g2 - ux * g8, c22 = ux * g5 - uy * g2;
      pg0 = pg0 + vg0 * h - 0.5 * c00 * h;
      pg3 = pg3 + vg3 * h - 0.5 * c10 * h;
      pg6 = pg6 + vg6 * h - 0.5 * c20 * h;
      vg0 = vg0 - c00;
      vg3 = vg3 - c10;
      vg6 = vg6 - c20;
      pg1 = pg1 + vg1 * h - 0.5 * c01 * h;
      pg4 = pg4 + vg4 * h - 0.5 * c11 * h;
      pg7 = pg7 + vg7 * h - 0.5 * c21 * h;
      vg1 = vg1 - c01;
      vg4 = vg4 - c11;
      vg7 = vg7 - c21;
      pg2 = pg2 + vg2 * h - 0.5 * c02 * h;
      pg5 = pg5 + vg5 * h - 0.5 * c12 * h;
      pg8 = pg8 + vg8 * h - 0.5 * c22 * h;
      vg2 = vg2 - c02;
      vg5 = vg5 - c12;
      vg8 = vg8 - c22;
      // ∂Δp/∂ba += ∂Δv/∂ba·h − ½ΔR h², ∂Δv/∂ba −= ΔR h.
      const hh = 0.5 * h * h;
      pa0 = pa0 + va0 * h - r0 * hh;
      va0 = va0 - r0 * h;
      pa1 = pa1 + va1 * h - r1 * hh;
      va1 = va1 - r1 * h;
      pa2 = pa2 + va2 * h - r2 * hh;
      va2 = va2 - r2 * h;
      pa3 = pa3 + va3 * h - r3 * hh;
      va3 = va3 - r3 * h;
      pa4 = pa4 + va4 * h - r4 * hh;
      va4 = va4 - r4 * h;
      pa5 = pa5 + va5 * h - r5 * hh;
      va5 = va5 - r5 * h;
      pa6 = pa6 + va6 * h - r6 * hh;
      va6 = va6 - r6 * h;
      pa7 = pa7 + va7 * h - r7 * hh;
      va7 = va7 - r7 * h;
      pa8 = pa8 + va8 * h - r8 * hh;
      va8 = va8 - r8 * h;
      // Position and velocity (Forster eq. 33 in frame i).
      p0 = p0 + v0 * h + 0.5 * ux * h;
      p1 = p1 + v1 * h + 0.5 * uy * h;
      p2 = p2 + v2 * h + 0.5 * uz * h;
      v0 = v0 + ux;
      v1 = v1 + uy;
      v2 = v2 + uz;
      // Rotation: G ← G − ΔR·Jl(φ)·h, ΔR ← ΔR·Exp(φ), φ = ω h (see rotationCoefficients).
      const x = wx * h, y = wy * h, z = wz * h;
      const t2 = x * x + y * y + z * z;
      let sb: number, sc: number, jc: number;
      if (t2 < 4e-4) {
        sb = 1 - (t2 / 6) * (1 - (t2 / 20) * (1 - t2 / 42));
        sc = 0.5 - (t2 / 24) * (1 - (t2 / 30) * (1 - t2 / 56));
        jc = 1 / 6 - (t2 / 120) * (1 - (t2 / 42) * (1 - t2 / 72));
      } else {
        const th = Math.sqrt(t2), sn = Math.sin(th);
        sb = sn / th;
        sc = (1 - Math.cos(th)) / t2;
        jc = (th - sn) / (t2 * th);
      }
      const jb = sc;
      // The same update for each of the three rows of ΔR (and its gyro-bias Jacobian), written out so the whole state
      // stays in locals: this loop runs once per IMU sample.
      const a00 = r1 * z - r2 * y, a01 = r2 * x - r0 * z, a02 = r0 * y - r1 * x;
      const b00 = a01 * z - a02 * y, b01 = a02 * x - a00 * z, b02 = a00 * y - a01 * x;
      g0 = g0 - (r0 + jb * a00 + jc * b00) * h;
      g1 = g1 - (r1 + jb * a01 + jc * b01) * h;
      g2 = g2 - (r2 + jb * a02 + jc * b02) * h;
      r0 = r0 + sb * a00 + sc * b00;
      r1 = r1 + sb * a01 + sc * b01;
      r2 = r2 + sb * a02 + sc * b02;
      const a10 = r4 * z - r5 * y, a11 = r5 * x - r3 * z, a12 = r3 * y - r4 * x;
      const b10 = a11 * z - a12 * y, b11 = a12 * x - a10 * z, b12 = a10 * y - a11 * x;
      g3 = g3 - (r3 + jb * a10 + jc * b10) * h;
      g4 = g4 - (r4 + jb * a11 + jc * b11) * h;
      g5 = g5 - (r5 + jb * a12 + jc * b12) * h;
      r3 = r3 + sb * a10 + sc * b10;
      r4 = r4 + sb * a11 + sc * b11;
      r5 = r5 + sb * a12 + sc * b12;
      const a20 = r7 * z - r8 * y, a21 = r8 * x - r6 * z, a22 = r6 * y - r7 * x;
      const b20 = a21 * z - a22 * y, b21 = a22 * x - a20 * z, b22 = a20 * y - a21 * x;
      g6 = g6 - (r6 + jb * a20 + jc * b20) * h;
      g7 = g7 - (r7 + jb * a21 + jc * b21) * h;
      g8 = g8 - (r8 + jb * a22 + jc * b22) * h;
      r6 = r6 + sb * a20 + sc * b20;
      r7 = r7 + sb * a21 + sc * b21;
      r8 = r8 + sb * a22 + sc * b22;
      dt += h;
    }
    s0 = s1;
    if (s1 === tk) next++;
  }
  RS[0] = r0;
  RS[1] = r1;
  RS[2] = r2;
  RS[3] = r3;
  RS[4] = r4;
  RS[5] = r5;
  RS[6] = r6;
  RS[7] = r7;
  RS[8] = r8;
  GS[0] = g0;
  GS[1] = g1;
  GS[2] = g2;
  GS[3] = g3;
  GS[4] = g4;
  GS[5] = g5;
  GS[6] = g6;
  GS[7] = g7;
  GS[8] = g8;
  VBGS[0] = vg0;
  VBGS[1] = vg1;
  VBGS[2] = vg2;
  VBGS[3] = vg3;
  VBGS[4] = vg4;
  VBGS[5] = vg5;
  VBGS[6] = vg6;
  VBGS[7] = vg7;
  VBGS[8] = vg8;
  PBGS[0] = pg0;
  PBGS[1] = pg1;
  PBGS[2] = pg2;
  PBGS[3] = pg3;
  PBGS[4] = pg4;
  PBGS[5] = pg5;
  PBGS[6] = pg6;
  PBGS[7] = pg7;
  PBGS[8] = pg8;
  VBAS[0] = va0;
  VBAS[1] = va1;
  VBAS[2] = va2;
  VBAS[3] = va3;
  VBAS[4] = va4;
  VBAS[5] = va5;
  VBAS[6] = va6;
  VBAS[7] = va7;
  VBAS[8] = va8;
  PBAS[0] = pa0;
  PBAS[1] = pa1;
  PBAS[2] = pa2;
  PBAS[3] = pa3;
  PBAS[4] = pa4;
  PBAS[5] = pa5;
  PBAS[6] = pa6;
  PBAS[7] = pa7;
  PBAS[8] = pa8;
  VS[0] = v0;
  VS[1] = v1;
  VS[2] = v2;
  PS[0] = p0;
  PS[1] = p1;
  PS[2] = p2;
  st.dt = dt;
  return next;
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
