/**
 * Batch preintegration of every consecutive keyframe interval of a run into flat typed arrays (struct of arrays).
 * One forward sweep over the IMU samples, O(n_imu + n_keyframes), no allocation per sample. Same method and
 * conventions as `preintegrate` (Forster et al., IEEE T-RO 33(1), 2017); see preintegration.ts.
 */
import { quat } from '@plumbline/geometry';
import type { ImuColumns } from '@plumbline/bundle';
import { createState, finish, integrateRange, lastAtOrBefore, nominalPeriod, resetState, DEFAULT_IMU_NOISE, type ImuNoise } from './preintegration.ts';

/**
 * Interval k spans keyTimes[k] → keyTimes[k+1] (IMU clock). Arrays are indexed by k with strides 3 (vectors),
 * 4 (quaternions w-first), 9 (row-major 3×3, covariance diagonal [δφ, δv, δp]).
 */
export interface PreintegrationBatch {
  n: number;
  tStart: Float64Array;
  tEnd: Float64Array;
  dt: Float64Array;
  /** 1 when the interval was integrated, 0 when a gap or the data boundary broke it (other fields then 0). */
  valid: Uint8Array;
  dq: Float64Array;
  dv: Float64Array;
  dp: Float64Array;
  /** Zeros when the batch was run without covariance propagation. */
  covDiag: Float64Array;
  dRdBg: Float64Array;
  dVdBg: Float64Array;
  dVdBa: Float64Array;
  dPdBg: Float64Array;
  dPdBa: Float64Array;
  bg: Float64Array;
  ba: Float64Array;
}

export function preintegrateBatch(
  imu: ImuColumns, keyTimes: Float64Array, bg: Float64Array, ba: Float64Array,
  noise: ImuNoise = DEFAULT_IMU_NOISE, maxGapS?: number, withCovariance = true,
): PreintegrationBatch {
  const n = Math.max(0, keyTimes.length - 1);
  const out: PreintegrationBatch = {
    n, tStart: keyTimes.slice(0, n), tEnd: keyTimes.slice(1, n + 1), dt: new Float64Array(n), valid: new Uint8Array(n),
    dq: new Float64Array(4 * n), dv: new Float64Array(3 * n), dp: new Float64Array(3 * n), covDiag: new Float64Array(9 * n),
    dRdBg: new Float64Array(9 * n), dVdBg: new Float64Array(9 * n), dVdBa: new Float64Array(9 * n),
    dPdBg: new Float64Array(9 * n), dPdBa: new Float64Array(9 * n), bg: bg.slice(), ba: ba.slice(),
  };
  const maxGap = maxGapS ?? 3 * nominalPeriod(imu.t, imu.n);
  const st = createState();
  const qg = noise.gyroNoiseDensity ** 2, qa = noise.accelNoiseDensity ** 2;
  st.covariance = withCovariance;
  const q = quat.create();
  let j = -1;
  for (let k = 0; k < n; k++) {
    const ta = keyTimes[k]!, tb = keyTimes[k + 1]!;
    if (!(tb > ta)) continue;
    // The cursor left by the previous interval is normally already right (t_j ≤ ta < t_{j+1}); search otherwise.
    if (j < 0 || imu.t[j]! > ta || (j + 1 < imu.n && imu.t[j + 1]! <= ta)) j = lastAtOrBefore(imu.t, imu.n, ta);
    if (j < 0) continue;
    resetState(st);
    const next = integrateRange(st, imu, j, ta, tb, bg, ba, qg, qa, maxGap);
    if (next < 0) {
      j = -1;
      continue;
    }
    j = next;
    finish(st);
    out.valid[k] = 1;
    out.dt[k] = st.dt;
    quat.fromMat3(q, st.r);
    out.dq.set(q, 4 * k);
    out.dv.set(st.v, 3 * k);
    out.dp.set(st.p, 3 * k);
    for (let d = 0; d < 9; d++) out.covDiag[9 * k + d] = st.cov[d * 10]!;
    out.dRdBg.set(st.g, 9 * k);
    out.dVdBg.set(st.vbg, 9 * k);
    out.dVdBa.set(st.vba, 9 * k);
    out.dPdBg.set(st.pbg, 9 * k);
    out.dPdBa.set(st.pba, 9 * k);
  }
  return out;
}

/**
 * First-order bias correction of interval k (Forster et al. 2017, eq. 44) into caller-owned buffers:
 * dqOut (quaternion), dvOut, dpOut. δbg, δba are relative to the batch's linearisation biases.
 */
export function correctBatchAt(
  b: PreintegrationBatch, k: number, dbg: ArrayLike<number>, dba: ArrayLike<number>,
  dqOut: Float64Array, dvOut: Float64Array, dpOut: Float64Array, scratchQ: Float64Array,
): void {
  const o9 = 9 * k;
  const J = b.dRdBg;
  const px = J[o9]! * dbg[0]! + J[o9 + 1]! * dbg[1]! + J[o9 + 2]! * dbg[2]!;
  const py = J[o9 + 3]! * dbg[0]! + J[o9 + 4]! * dbg[1]! + J[o9 + 5]! * dbg[2]!;
  const pz = J[o9 + 6]! * dbg[0]! + J[o9 + 7]! * dbg[1]! + J[o9 + 8]! * dbg[2]!;
  quat.fromRotationVector(scratchQ, px, py, pz);
  dqOut[0] = b.dq[4 * k]!;
  dqOut[1] = b.dq[4 * k + 1]!;
  dqOut[2] = b.dq[4 * k + 2]!;
  dqOut[3] = b.dq[4 * k + 3]!;
  quat.multiply(dqOut, dqOut, scratchQ);
  for (let i = 0; i < 3; i++) {
    const r = o9 + 3 * i;
    dvOut[i] = b.dv[3 * k + i]! + b.dVdBg[r]! * dbg[0]! + b.dVdBg[r + 1]! * dbg[1]! + b.dVdBg[r + 2]! * dbg[2]!
      + b.dVdBa[r]! * dba[0]! + b.dVdBa[r + 1]! * dba[1]! + b.dVdBa[r + 2]! * dba[2]!;
    dpOut[i] = b.dp[3 * k + i]! + b.dPdBg[r]! * dbg[0]! + b.dPdBg[r + 1]! * dbg[1]! + b.dPdBg[r + 2]! * dbg[2]!
      + b.dPdBa[r]! * dba[0]! + b.dPdBa[r + 1]! * dba[1]! + b.dPdBa[r + 2]! * dba[2]!;
  }
}

export { DEFAULT_IMU_NOISE };
export type { ImuNoise };
