/**
 * IMU preintegration between keyframes.
 *
 * What: the relative rotation ΔR_ij, velocity change Δv_ij and position change Δp_ij that the gyro and accelerometer
 * alone predict between keyframe times t_i and t_j, expressed in the IMU frame at t_i and independent of the
 * (unknown) world state, with their 9×9 covariance and first-order bias Jacobians so that a bias update needs no
 * re-integration. Units: rad, m/s, m, s. Gravity is NOT included: Δv_ij = Σ ΔR_ik (ã_k − ba) h, so
 * R_j = R_i ΔR_ij, v_j = v_i + g Δt + R_i Δv_ij, p_j = p_i + v_i Δt + ½ g Δt² + R_i Δp_ij.
 *
 * Method: C. Forster, L. Carlone, F. Dellaert, D. Scaramuzza, "On-Manifold Preintegration for Real-Time
 * Visual–Inertial Odometry", IEEE T-RO 33(1), 2017 (eqs. 26–27 for the increments, 44 for the bias correction,
 * Appendix A–B for covariance and Jacobians). Each IMU sample interval is integrated with the mean of the linearly
 * interpolated measurements over the part of the interval inside [t_i, t_j] (the trapezoidal/midpoint rule), so
 * keyframe times between IMU samples are handled exactly for piecewise-linear signals.
 * Covariance order [δφ, δv, δp]; δφ is a right perturbation in the frame at t_j as in the paper.
 */
import { quat } from '@plumbline/geometry';
import type { ImuColumns } from '@plumbline/bundle';
import { createState, finish, integrateRange, resetState, type PreState } from './preintegration-core.ts';
import type { Unsupported } from './types.ts';

export interface ImuNoise {
  /** rad/s/√Hz */
  gyroNoiseDensity: number;
  /** m/s²/√Hz */
  accelNoiseDensity: number;
}

/** Consumer-MEMS defaults when the manifest gives no densities: 0.01 °/s/√Hz and 200 µg/√Hz (common practice). */
export const DEFAULT_IMU_NOISE: ImuNoise = { gyroNoiseDensity: (0.01 * Math.PI) / 180, accelNoiseDensity: 200e-6 * 9.80665 };

export interface Preintegrated {
  ok: true;
  tStart: number;
  tEnd: number;
  dt: number;
  /** ΔR_ij, row-major 3×3. */
  dR: Float64Array;
  dv: Float64Array;
  dp: Float64Array;
  /** 9×9 row-major covariance of [δφ, δv, δp]. */
  cov: Float64Array;
  dRdBg: Float64Array;
  dVdBg: Float64Array;
  dVdBa: Float64Array;
  dPdBg: Float64Array;
  dPdBa: Float64Array;
  /** Biases the increments were integrated with (linearisation point of the Jacobians). */
  bg: Float64Array;
  ba: Float64Array;
}

export interface IntegrateOptions {
  /** A sample spacing above this breaks the interval (s). Default: 3 median sample periods. */
  maxGapS?: number;
}

/** Index of the last sample with t ≤ time (binary search), −1 if none. */
export function lastAtOrBefore(t: Float64Array, n: number, time: number): number {
  let lo = 0, hi = n - 1;
  if (n === 0 || t[0]! > time) return -1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (t[mid]! <= time) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

/** Median of the first few thousand sample spacings (s). */
export function nominalPeriod(t: Float64Array, n: number): number {
  const m = Math.min(n - 1, 4001);
  if (m < 1) return Number.NaN;
  const d = new Float64Array(m);
  for (let i = 0; i < m; i++) d[i] = t[i + 1]! - t[i]!;
  d.sort();
  return d[m >> 1]!;
}

/**
 * Preintegrates the IMU between ta and tb (IMU clock, s) with biases bg (rad/s) and ba (m/s²).
 * Returns `{ ok: false }` when the interval is empty, outside the data, or crosses a gap.
 */
export function preintegrate(
  imu: ImuColumns, ta: number, tb: number, bg: Float64Array, ba: Float64Array,
  noise: ImuNoise = DEFAULT_IMU_NOISE, options: IntegrateOptions = {},
): Preintegrated | Unsupported {
  if (!(tb > ta)) return { ok: false, reason: 'insufficient: empty interval' };
  const j = lastAtOrBefore(imu.t, imu.n, ta);
  if (j < 0) return { ok: false, reason: 'insufficient: interval starts before the IMU data' };
  const maxGap = options.maxGapS ?? 3 * nominalPeriod(imu.t, imu.n);
  const st = createState();
  const end = integrateRange(st, imu, j, ta, tb, bg, ba, noise.gyroNoiseDensity ** 2, noise.accelNoiseDensity ** 2, maxGap);
  if (end < 0) return { ok: false, reason: 'insufficient: IMU gap or end of data inside the interval' };
  finish(st);
  return {
    ok: true, tStart: ta, tEnd: tb, dt: st.dt,
    dR: st.r.slice(), dv: st.v.slice(), dp: st.p.slice(), cov: st.cov.slice(),
    dRdBg: st.g.slice(), dVdBg: st.vbg.slice(), dVdBa: st.vba.slice(), dPdBg: st.pbg.slice(), dPdBa: st.pba.slice(),
    bg: bg.slice(), ba: ba.slice(),
  };
}

/** out = M·x for a row-major 3×3 M and x = (x0, x1, x2), added to `base`. */
function addMulVec(out: Float64Array, o: number, base: ArrayLike<number>, bo: number, m: ArrayLike<number>, mo: number, x: ArrayLike<number>): void {
  for (let i = 0; i < 3; i++) {
    out[o + i] = base[bo + i]! + m[mo + i * 3]! * x[0]! + m[mo + i * 3 + 1]! * x[1]! + m[mo + i * 3 + 2]! * x[2]!;
  }
}

/**
 * First-order bias correction without re-integration (Forster et al. 2017, eq. 44):
 * ΔR(bg + δbg) ≈ ΔR·Exp(∂ΔR/∂bg·δbg), Δv ≈ Δv + ∂Δv/∂bg δbg + ∂Δv/∂ba δba, Δp likewise.
 * δbg, δba are the changes relative to the biases the increments were integrated with.
 */
export function correct(pre: Preintegrated, dbg: ArrayLike<number>, dba: ArrayLike<number>): { dR: Float64Array; dv: Float64Array; dp: Float64Array } {
  const phi = new Float64Array(3);
  addMulVec(phi, 0, [0, 0, 0], 0, pre.dRdBg, 0, dbg);
  const q = quat.fromRotationVector(quat.create(), phi[0]!, phi[1]!, phi[2]!);
  const e = quat.toMat3(new Float64Array(9), q);
  const dR = new Float64Array(9);
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++)
      dR[i * 3 + j] = pre.dR[i * 3]! * e[j]! + pre.dR[i * 3 + 1]! * e[3 + j]! + pre.dR[i * 3 + 2]! * e[6 + j]!;
  const dv = new Float64Array(3);
  const dp = new Float64Array(3);
  addMulVec(dv, 0, pre.dv, 0, pre.dVdBg, 0, dbg);
  addMulVec(dv, 0, dv, 0, pre.dVdBa, 0, dba);
  addMulVec(dp, 0, pre.dp, 0, pre.dPdBg, 0, dbg);
  addMulVec(dp, 0, dp, 0, pre.dPdBa, 0, dba);
  return { dR, dv, dp };
}

export { addMulVec };
export type { PreState };
export { resetState, createState, finish, integrateRange };
