import { so3, type Mat3, type Vec3 } from '@plumbline/geometry';

/**
 * Residuals and Jacobians of relative-pose edges for the pose graph.
 *
 * SE(3) mode: state per node is (R, t) with perturbation δ = [δt, δφ], t ← t + δt, R ← R·Exp(δφ).
 * An edge i→j with measurement (Rm, tm) = pose of j seen from i has residual
 *   r_t = Riᵀ(tj − ti) − tm,   r_φ = Log(Rmᵀ·Riᵀ·Rj)
 * with Jacobians ∂r_t/∂δti = −Riᵀ, ∂r_t/∂δφi = [Riᵀ(tj − ti)]×, ∂r_t/∂δtj = Riᵀ,
 * ∂r_φ/∂δφj = Jr⁻¹(r_φ), ∂r_φ/∂δφi = −Jr⁻¹(r_φ)·Rjᵀ·Ri (Forster et al., T-RO 2017, on-manifold derivatives;
 * G. Grisetti et al., "A Tutorial on Graph-Based SLAM", IEEE ITS Magazine 2010, for the graph formulation).
 *
 * Planar mode: state (x, y, θ); r_xy = R(θi)ᵀ(pj − pi) − m_xy, r_θ = wrap(θj − θi − m_θ).
 */

export const SE3_DIM = 6;
export const PLANAR_DIM = 3;

const scratch = {
  RiT: new Float64Array(9) as Mat3,
  A: new Float64Array(9) as Mat3,
  B: new Float64Array(9) as Mat3,
  Jinv: new Float64Array(9) as Mat3,
  d: new Float64Array(3) as Vec3,
  u: new Float64Array(3) as Vec3,
  phi: new Float64Array(3) as Vec3,
  Ri: new Float64Array(9) as Mat3,
  Rj: new Float64Array(9) as Mat3,
};

function mul(out: Mat3, a: Mat3, b: Mat3): Mat3 {
  for (let r = 0; r < 3; r++) {
    for (let c = 0; c < 3; c++) {
      out[r * 3 + c] = a[r * 3]! * b[c]! + a[r * 3 + 1]! * b[3 + c]! + a[r * 3 + 2]! * b[6 + c]!;
    }
  }
  return out;
}

function transpose(out: Mat3, a: Mat3): Mat3 {
  for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) out[c * 3 + r] = a[r * 3 + c]!;
  return out;
}

/**
 * SE(3) edge. R: n·9 rotation matrices, t: n·3 positions; meas: (Rm 9, tm 3) at offsets mR, mT.
 * Writes r (6), Ji (6×6 row-major), Jj (6×6 row-major).
 */
export function se3Edge(
  R: Float64Array, t: Float64Array, i: number, j: number,
  mR: Float64Array, mRo: number, mT: Float64Array, mTo: number,
  r: Float64Array, Ji: Float64Array, Jj: Float64Array, withJacobians = true,
): void {
  const { RiT, A, B, Jinv, d, u, phi, Ri, Rj } = scratch;
  for (let k = 0; k < 9; k++) {
    Ri[k] = R[i * 9 + k]!;
    Rj[k] = R[j * 9 + k]!;
  }
  transpose(RiT, Ri);
  d[0] = t[j * 3]! - t[i * 3]!;
  d[1] = t[j * 3 + 1]! - t[i * 3 + 1]!;
  d[2] = t[j * 3 + 2]! - t[i * 3 + 2]!;
  for (let a = 0; a < 3; a++) u[a] = RiT[a * 3]! * d[0] + RiT[a * 3 + 1]! * d[1] + RiT[a * 3 + 2]! * d[2];
  for (let a = 0; a < 3; a++) r[a] = u[a]! - mT[mTo + a]!;
  // A = Rmᵀ·Riᵀ·Rj
  mul(B, RiT, Rj);
  for (let a = 0; a < 3; a++) {
    for (let c = 0; c < 3; c++) {
      A[a * 3 + c] = mR[mRo + a]! * B[c]! + mR[mRo + 3 + a]! * B[3 + c]! + mR[mRo + 6 + a]! * B[6 + c]!;
    }
  }
  so3.log(phi, A);
  r[3] = phi[0]!;
  r[4] = phi[1]!;
  r[5] = phi[2]!;
  if (!withJacobians) return;
  so3.rightJacobianInverse(Jinv, phi);
  Ji.fill(0);
  Jj.fill(0);
  for (let a = 0; a < 3; a++) {
    for (let c = 0; c < 3; c++) {
      Ji[a * 6 + c] = -RiT[a * 3 + c]!;
      Jj[a * 6 + c] = RiT[a * 3 + c]!;
    }
  }
  // [u]× into Ji rows 0..2, cols 3..5
  Ji[4] = -u[2]!; Ji[5] = u[1]!;
  Ji[6 + 3] = u[2]!; Ji[6 + 5] = -u[0]!;
  Ji[12 + 3] = -u[1]!; Ji[12 + 4] = u[0]!;
  // B = Rjᵀ·Ri; A = Jinv·B
  for (let a = 0; a < 3; a++) {
    for (let c = 0; c < 3; c++) B[a * 3 + c] = Rj[a]! * Ri[c]! + Rj[3 + a]! * Ri[3 + c]! + Rj[6 + a]! * Ri[6 + c]!;
  }
  mul(A, Jinv, B);
  for (let a = 0; a < 3; a++) {
    for (let c = 0; c < 3; c++) {
      Ji[(3 + a) * 6 + 3 + c] = -A[a * 3 + c]!;
      Jj[(3 + a) * 6 + 3 + c] = Jinv[a * 3 + c]!;
    }
  }
}

export function wrapAngle(a: number): number {
  return a - 2 * Math.PI * Math.round(a / (2 * Math.PI));
}

/** Planar edge. s: n·3 states (x, y, θ); meas (mx, my, mθ) at offset mo. Writes r (3), Ji, Jj (3×3 row-major). */
export function planarEdge(
  s: Float64Array, i: number, j: number, meas: Float64Array, mo: number,
  r: Float64Array, Ji: Float64Array, Jj: Float64Array,
): void {
  const th = s[i * 3 + 2]!, c = Math.cos(th), sn = Math.sin(th);
  const dx = s[j * 3]! - s[i * 3]!, dy = s[j * 3 + 1]! - s[i * 3 + 1]!;
  r[0] = c * dx + sn * dy - meas[mo]!;
  r[1] = -sn * dx + c * dy - meas[mo + 1]!;
  r[2] = wrapAngle(s[j * 3 + 2]! - th - meas[mo + 2]!);
  Ji[0] = -c; Ji[1] = -sn; Ji[2] = -sn * dx + c * dy;
  Ji[3] = sn; Ji[4] = -c; Ji[5] = -c * dx - sn * dy;
  Ji[6] = 0; Ji[7] = 0; Ji[8] = -1;
  Jj[0] = c; Jj[1] = sn; Jj[2] = 0;
  Jj[3] = -sn; Jj[4] = c; Jj[5] = 0;
  Jj[6] = 0; Jj[7] = 0; Jj[8] = 1;
}
