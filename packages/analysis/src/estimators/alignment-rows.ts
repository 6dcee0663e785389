/**
 * Rows of the visual–inertial alignment: one 3-vector equation per triplet of consecutive alignment keyframes
 * (a, b, c), eliminating the unknown velocities:
 *
 *   s·λ + β·g − M·ba = y,   with
 *   λ = (q_c − q_b)/Δt_bc − (q_b − q_a)/Δt_ab          (odometry positions q, odometry units)
 *   β = −½(Δt_ab + Δt_bc)
 *   y = R_a Δv_ab − R_a Δp_ab/Δt_ab + R_b Δp_bc/Δt_bc + (l_c − l_b)/Δt_bc − (l_b − l_a)/Δt_ab
 *   M = R_a ∂Δv_ab/∂ba − R_a ∂Δp_ab/∂ba/Δt_ab + R_b ∂Δp_bc/∂ba/Δt_bc
 *
 * R_i = R_WB,i·R_IBᵀ (IMU orientation in the odometry world), l_i = R_i·t (t = odometry origin in the IMU frame,
 * the lever arm), s = metres per odometry unit, g = gravity in the odometry world (m/s²), ba = accelerometer bias.
 * Follows from p_j = p_i + v_i Δt + ½gΔt² + R_i Δp_ij and v_j = v_i + gΔt + R_i Δv_ij (Forster et al., IEEE T-RO 2017);
 * the three-keyframe elimination of velocities is that of R. Mur-Artal & J. D. Tardós, "Visual-Inertial Monocular SLAM
 * with Map Reuse", IEEE RA-L 2(2), 2017, §V-A.
 */
import { quat } from '@plumbline/geometry';
import type { PreintegrationBatch } from './preintegration-batch.ts';
import { correctBatchAt } from './preintegration-batch.ts';
import type { Keyframes } from './keyframes.ts';

export interface AlignmentRows {
  n: number;
  /** Rows per independent triplet (stride / row step): consecutive rows share keyframes when > 1. */
  overlap: number;
  /** Middle keyframe time (IMU clock) and odometry distance at it. */
  t: Float64Array;
  distance: Float64Array;
  lam: Float64Array;
  beta: Float64Array;
  y: Float64Array;
  m: Float64Array;
  /** Mean odometry velocity over the second interval (b, c), odometry units/s, stride 3; and that interval's length. */
  vOdom: Float64Array;
  dtBc: Float64Array;
}

interface Span {
  ok: boolean;
  a: number;
  b: number;
  T: number;
  r: Float64Array;
  v: Float64Array;
  p: Float64Array;
  jv: Float64Array;
  jp: Float64Array;
}

function newSpan(): Span {
  return { ok: false, a: 0, b: 0, T: 0, r: new Float64Array(9), v: new Float64Array(3), p: new Float64Array(3), jv: new Float64Array(9), jp: new Float64Array(9) };
}

const sq = quat.create(), dq = quat.create(), dv = new Float64Array(3), dp = new Float64Array(3), m9 = new Float64Array(9), t9 = new Float64Array(9);

/** Composes batch intervals k0..k0+stride−1 (gyro bias corrected by dbg) into span: R = R1R2, v = v1 + R1v2, … */
function composeSpan(b: PreintegrationBatch, k0: number, stride: number, dbg: ArrayLike<number>, out: Span): void {
  out.ok = false;
  if (k0 + stride > b.n) return;
  out.r.fill(0);
  out.r[0] = out.r[4] = out.r[8] = 1;
  out.v.fill(0);
  out.p.fill(0);
  out.jv.fill(0);
  out.jp.fill(0);
  out.T = 0;
  const zero = [0, 0, 0];
  for (let k = k0; k < k0 + stride; k++) {
    if (b.valid[k] !== 1) return;
    correctBatchAt(b, k, dbg, zero, dq, dv, dp, sq);
    const T2 = b.dt[k]!, R = out.r;
    for (let i = 0; i < 3; i++) {
      const r0 = R[3 * i]!, r1 = R[3 * i + 1]!, r2 = R[3 * i + 2]!;
      out.p[i] = out.p[i]! + out.v[i]! * T2 + r0 * dp[0]! + r1 * dp[1]! + r2 * dp[2]!;
      out.v[i] = out.v[i]! + r0 * dv[0]! + r1 * dv[1]! + r2 * dv[2]!;
      for (let j = 0; j < 3; j++) {
        const o = 9 * k + j;
        const rjv = r0 * b.dVdBa[o]! + r1 * b.dVdBa[o + 3]! + r2 * b.dVdBa[o + 6]!;
        const rjp = r0 * b.dPdBa[o]! + r1 * b.dPdBa[o + 3]! + r2 * b.dPdBa[o + 6]!;
        out.jp[3 * i + j] = out.jp[3 * i + j]! + out.jv[3 * i + j]! * T2 + rjp;
        out.jv[3 * i + j] = out.jv[3 * i + j]! + rjv;
      }
    }
    quat.toMat3(m9, dq);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) t9[3 * i + j] = R[3 * i]! * m9[j]! + R[3 * i + 1]! * m9[3 + j]! + R[3 * i + 2]! * m9[6 + j]!;
    R.set(t9);
    out.T += T2;
  }
  out.ok = true;
  out.a = k0;
  out.b = k0 + stride;
}

/**
 * Builds the alignment rows over spans of `stride` batch intervals, one triplet starting at every `rowStep`-th
 * keyframe (rowStep < stride uses every keyframe; rows then overlap and share noise, see `overlap`). `imuQOdom` = R_IB (w-first),
 * `leverM` = odometry origin in the IMU frame (m), dbg = gyro bias correction relative to the batch's linearisation.
 */
export function buildAlignmentRows(
  b: PreintegrationBatch, kf: Keyframes, imuQOdom: Float64Array, leverM: ArrayLike<number>, dbg: ArrayLike<number>, stride: number,
  rowStep = 1,
): AlignmentRows {
  const cap = b.n;
  const rows: AlignmentRows = {
    n: 0, overlap: stride / rowStep, t: new Float64Array(cap), distance: new Float64Array(cap), lam: new Float64Array(3 * cap),
    beta: new Float64Array(cap), y: new Float64Array(3 * cap), m: new Float64Array(9 * cap),
    vOdom: new Float64Array(3 * cap), dtBc: new Float64Array(cap),
  };
  const X = quat.toMat3(new Float64Array(9), imuQOdom);
  const Ra = new Float64Array(9), Rb = new Float64Array(9), Rc = new Float64Array(9), qb = quat.create();
  const A = newSpan(), B = newSpan();
  const worldImu = (out: Float64Array, k: number) => {
    qb.set(kf.q.subarray(4 * k, 4 * k + 4));
    quat.toMat3(m9, qb);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) out[3 * i + j] = m9[3 * i]! * X[3 * j]! + m9[3 * i + 1]! * X[3 * j + 1]! + m9[3 * i + 2]! * X[3 * j + 2]!;
  };
  for (let k0 = 0; k0 + 2 * stride <= b.n; k0 += rowStep) {
    composeSpan(b, k0, stride, dbg, A);
    if (!A.ok) continue;
    composeSpan(b, k0 + stride, stride, dbg, B);
    if (!B.ok) continue;
    const ia = A.a, ib = A.b, ic = B.b;
    worldImu(Ra, ia);
    worldImu(Rb, ib);
    worldImu(Rc, ic);
    const r = rows.n++;
    rows.t[r] = kf.tImu[ib]!;
    rows.distance[r] = kf.distance[ib]!;
    rows.beta[r] = -0.5 * (A.T + B.T);
    rows.dtBc[r] = B.T;
    for (let i = 0; i < 3; i++) {
      const qa = kf.p[3 * ia + i]!, qbb = kf.p[3 * ib + i]!, qc = kf.p[3 * ic + i]!;
      rows.lam[3 * r + i] = (qc - qbb) / B.T - (qbb - qa) / A.T;
      rows.vOdom[3 * r + i] = (qc - qbb) / B.T;
      let y = 0;
      for (let j = 0; j < 3; j++) {
        y += Ra[3 * i + j]! * (A.v[j]! - A.p[j]! / A.T) + (Rb[3 * i + j]! * B.p[j]!) / B.T;
        const la = Ra[3 * i + j]! * leverM[j]!, lb = Rb[3 * i + j]! * leverM[j]!, lc = Rc[3 * i + j]! * leverM[j]!;
        y += (lc - lb) / B.T - (lb - la) / A.T;
        let mv = 0;
        for (let k = 0; k < 3; k++) {
          mv += Ra[3 * i + k]! * (A.jv[3 * k + j]! - A.jp[3 * k + j]! / A.T) + (Rb[3 * i + k]! * B.jp[3 * k + j]!) / B.T;
        }
        rows.m[9 * r + 3 * i + j] = mv;
      }
      rows.y[3 * r + i] = y;
    }
  }
  return rows;
}
