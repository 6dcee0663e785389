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

const sq = quat.create(), dq = quat.create(), m9 = new Float64Array(9), t9 = new Float64Array(9);

/** Every valid batch interval with the gyro bias corrected by dbg, once: ΔR (row-major 3×3), Δv, Δp, stride 9/3/3. */
interface Corrected {
  r: Float64Array;
  v: Float64Array;
  p: Float64Array;
}

function correctAll(b: PreintegrationBatch, dbg: ArrayLike<number>): Corrected {
  const out: Corrected = { r: new Float64Array(9 * b.n), v: new Float64Array(3 * b.n), p: new Float64Array(3 * b.n) };
  const zero = [0, 0, 0], dv = new Float64Array(3), dp = new Float64Array(3);
  for (let k = 0; k < b.n; k++) {
    if (b.valid[k] !== 1) continue;
    correctBatchAt(b, k, dbg, zero, dq, dv, dp, sq);
    out.r.set(quat.toMat3(m9, dq), 9 * k);
    out.v.set(dv, 3 * k);
    out.p.set(dp, 3 * k);
  }
  return out;
}

/** Composes batch intervals k0..k0+stride−1 (corrected by `correctAll`) into span: R = R1R2, v = v1 + R1v2, … */
function composeSpan(b: PreintegrationBatch, c: Corrected, k0: number, stride: number, out: Span): void {
  out.ok = false;
  if (k0 + stride > b.n) return;
  out.r.fill(0);
  out.r[0] = out.r[4] = out.r[8] = 1;
  out.v.fill(0);
  out.p.fill(0);
  out.jv.fill(0);
  out.jp.fill(0);
  out.T = 0;
  for (let k = k0; k < k0 + stride; k++) {
    if (b.valid[k] !== 1) return;
    const T2 = b.dt[k]!, R = out.r, o3 = 3 * k, o9 = 9 * k;
    for (let i = 0; i < 3; i++) {
      const r0 = R[3 * i]!, r1 = R[3 * i + 1]!, r2 = R[3 * i + 2]!;
      out.p[i] = out.p[i]! + out.v[i]! * T2 + r0 * c.p[o3]! + r1 * c.p[o3 + 1]! + r2 * c.p[o3 + 2]!;
      out.v[i] = out.v[i]! + r0 * c.v[o3]! + r1 * c.v[o3 + 1]! + r2 * c.v[o3 + 2]!;
      for (let j = 0; j < 3; j++) {
        const o = o9 + j;
        const rjv = r0 * b.dVdBa[o]! + r1 * b.dVdBa[o + 3]! + r2 * b.dVdBa[o + 6]!;
        const rjp = r0 * b.dPdBa[o]! + r1 * b.dPdBa[o + 3]! + r2 * b.dPdBa[o + 6]!;
        out.jp[3 * i + j] = out.jp[3 * i + j]! + out.jv[3 * i + j]! * T2 + rjp;
        out.jv[3 * i + j] = out.jv[3 * i + j]! + rjv;
      }
    }
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) t9[3 * i + j] = R[3 * i]! * c.r[o9 + j]! + R[3 * i + 1]! * c.r[o9 + 3 + j]! + R[3 * i + 2]! * c.r[o9 + 6 + j]!;
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
  const corrected = correctAll(b, dbg);
  // Spans by start interval; the second span of a row is the first span of the row `stride` intervals later, so a
  // ring of stride + 1 spans composes each span once.
  const ring = Array.from({ length: stride + 1 }, () => ({ start: -1, span: newSpan() }));
  const spanAt = (k: number): Span => {
    const slot = ring[k % ring.length]!;
    if (slot.start !== k) {
      composeSpan(b, corrected, k, stride, slot.span);
      slot.start = k;
    }
    return slot.span;
  };
  // R_W,imu = R_WB·X_ᵀ at every keyframe (each one serves three rows), stride 9.
  const W = new Float64Array(9 * (b.n + 1)), qb = quat.create();
  for (let k = 0; k <= b.n && k < kf.n; k++) {
    quat.set(qb, kf.q[4 * k]!, kf.q[4 * k + 1]!, kf.q[4 * k + 2]!, kf.q[4 * k + 3]!);
    quat.toMat3(m9, qb);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) W[9 * k + 3 * i + j] = m9[3 * i]! * X[3 * j]! + m9[3 * i + 1]! * X[3 * j + 1]! + m9[3 * i + 2]! * X[3 * j + 2]!;
  }
  for (let k0 = 0; k0 + 2 * stride <= b.n; k0 += rowStep) {
    const A = spanAt(k0);
    if (!A.ok) continue;
    const B = spanAt(k0 + stride);
    if (!B.ok) continue;
    const ia = A.a, ib = A.b, ic = B.b, oa = 9 * ia, ob = 9 * ib, oc = 9 * ic;
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
        y += W[oa + 3 * i + j]! * (A.v[j]! - A.p[j]! / A.T) + (W[ob + 3 * i + j]! * B.p[j]!) / B.T;
        const la = W[oa + 3 * i + j]! * leverM[j]!, lb = W[ob + 3 * i + j]! * leverM[j]!, lc = W[oc + 3 * i + j]! * leverM[j]!;
        y += (lc - lb) / B.T - (lb - la) / A.T;
        let mv = 0;
        for (let k = 0; k < 3; k++) {
          mv += W[oa + 3 * i + k]! * (A.jv[3 * k + j]! - A.jp[3 * k + j]! / A.T) + (W[ob + 3 * i + k]! * B.jp[3 * k + j]!) / B.T;
        }
        rows.m[9 * r + 3 * i + j] = mv;
      }
      rows.y[3 * r + i] = y;
    }
  }
  return rows;
}
