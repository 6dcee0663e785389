/**
 * The rotation group SO(3) on row-major Mat3 (Float64Array(9)) and rotation vectors φ = axis·angle (rad).
 * Conventions follow C. Forster et al., "On-Manifold Preintegration for Real-Time Visual–Inertial Odometry",
 * IEEE T-RO 33(1), 2017 (from memory): Exp(φ) = I + sin‖φ‖/‖φ‖ [φ]× + (1 − cos‖φ‖)/‖φ‖² [φ]×², with right Jacobian Jr and the
 * first-order identity Exp(φ + δφ) ≈ Exp(φ) Exp(Jr(φ) δφ).
 */
import * as mat3 from './mat3.ts';
import type { Mat3 } from './mat3.ts';
import * as quat from './quat.ts';
import type { Quat } from './quat.ts';
import type { Vec3 } from './vec3.ts';

/** Below this angle (rad) closed forms lose digits to cancellation and Taylor series are used instead. */
const SMALL_ANGLE_RAD = 1e-4;

const scratchQuat: Quat = quat.create();
const scratchMat: Mat3 = mat3.create();

/** Skew-symmetric matrix [v]× with [v]× u = v × u. */
export function hat(out: Mat3, v: Vec3): Mat3 {
  return mat3.hat(out, v);
}

/** Inverse of hat: reads the vector from the antisymmetric part ½(M − Mᵀ), so near-skew inputs are tolerated. */
export function vee(out: Vec3, m: Mat3): Vec3 {
  out[0] = 0.5 * (m[7]! - m[5]!);
  out[1] = 0.5 * (m[2]! - m[6]!);
  out[2] = 0.5 * (m[3]! - m[1]!);
  return out;
}

/**
 * out = a·I + b·[φ]× + c·[φ]×² for φ = (x, y, z), without forming the intermediate matrices; the common form of
 * Exp(φ) and the SO(3) Jacobians, exported for hot loops that hold φ as scalars.
 * Uses [φ]×² = φφᵀ − ‖φ‖² I.
 */
export function hatPolynomial(out: Mat3, x: number, y: number, z: number, a: number, b: number, c: number): Mat3 {
  const d = a - c * (x * x + y * y + z * z);
  out[0] = d + c * x * x;
  out[1] = c * x * y - b * z;
  out[2] = c * x * z + b * y;
  out[3] = c * y * x + b * z;
  out[4] = d + c * y * y;
  out[5] = c * y * z - b * x;
  out[6] = c * z * x - b * y;
  out[7] = c * z * y + b * x;
  out[8] = d + c * z * z;
  return out;
}

function combine(out: Mat3, phi: Vec3, a: number, b: number, c: number): Mat3 {
  return hatPolynomial(out, phi[0]!, phi[1]!, phi[2]!, a, b, c);
}

/** Exponential map (Rodrigues' formula): rotation vector φ (rad) → rotation matrix. Forster et al. 2017. */
export function exp(out: Mat3, phi: Vec3): Mat3 {
  const t2 = phi[0]! * phi[0]! + phi[1]! * phi[1]! + phi[2]! * phi[2]!;
  const t = Math.sqrt(t2);
  let b: number;
  let c: number;
  if (t < SMALL_ANGLE_RAD) {
    b = 1 - t2 / 6;
    c = 0.5 - t2 / 24;
  } else {
    b = Math.sin(t) / t;
    c = (1 - Math.cos(t)) / t2;
  }
  return combine(out, phi, 1, b, c);
}

/**
 * Logarithm map: rotation matrix → rotation vector (rad) with angle in [0, π].
 * Goes through the quaternion (Shepperd's pivoting) and atan2, which stays accurate both near the identity, where
 * (tr R − 1)/2 → 1 loses digits, and near π, where the antisymmetric part vanishes. Forster et al. 2017.
 */
export function log(out: Vec3, r: Mat3): Vec3 {
  quat.fromMat3(scratchQuat, r);
  return quat.toRotationVector(out, scratchQuat);
}

/** Rotation angle of a rotation matrix, radians in [0, π]. */
export function angle(r: Mat3): number {
  quat.fromMat3(scratchQuat, r);
  return quat.angle(scratchQuat);
}

/**
 * Right Jacobian of SO(3): Jr(φ) = I − (1 − cos θ)/θ² [φ]× + (θ − sin θ)/θ³ [φ]×², θ = ‖φ‖.
 * Forster et al. 2017; satisfies Exp(φ + δφ) ≈ Exp(φ)·Exp(Jr(φ)·δφ).
 */
export function rightJacobian(out: Mat3, phi: Vec3): Mat3 {
  const t2 = phi[0]! * phi[0]! + phi[1]! * phi[1]! + phi[2]! * phi[2]!;
  const t = Math.sqrt(t2);
  let b: number;
  let c: number;
  if (t < SMALL_ANGLE_RAD) {
    b = 0.5 - t2 / 24;
    c = 1 / 6 - t2 / 120;
  } else {
    b = (1 - Math.cos(t)) / t2;
    c = (t - Math.sin(t)) / (t2 * t);
  }
  return combine(out, phi, 1, -b, c);
}

/**
 * Inverse right Jacobian: Jr⁻¹(φ) = I + ½[φ]× + (1/θ² − (1 + cos θ)/(2θ sin θ)) [φ]×².
 * Forster et al. 2017. Singular at θ = 2π; callers pass angles in [0, π].
 */
export function rightJacobianInverse(out: Mat3, phi: Vec3): Mat3 {
  const t2 = phi[0]! * phi[0]! + phi[1]! * phi[1]! + phi[2]! * phi[2]!;
  const t = Math.sqrt(t2);
  const c = t < SMALL_ANGLE_RAD ? 1 / 12 + t2 / 720 : 1 / t2 - (1 + Math.cos(t)) / (2 * t * Math.sin(t));
  return combine(out, phi, 1, 0.5, c);
}

/** Left Jacobian Jl(φ) = Jr(−φ) = Jr(φ)ᵀ (used by SE(3) exp/log). */
export function leftJacobian(out: Mat3, phi: Vec3): Mat3 {
  rightJacobian(out, phi);
  return mat3.transpose(out, out);
}

/** Inverse left Jacobian Jl⁻¹(φ) = Jr⁻¹(φ)ᵀ. */
export function leftJacobianInverse(out: Mat3, phi: Vec3): Mat3 {
  rightJacobianInverse(out, phi);
  return mat3.transpose(out, out);
}

/** Rotation matrix of a unit quaternion [w, x, y, z] (same as quat.toMat3). */
export function fromQuat(out: Mat3, q: Quat): Mat3 {
  return quat.toMat3(out, q);
}

/** Unit quaternion (w ≥ 0) of a rotation matrix (same as quat.fromMat3). */
export function toQuat(out: Quat, r: Mat3): Quat {
  return quat.fromMat3(out, r);
}

/** out = R·Exp(δφ): the right-perturbation update used by iterative solvers (out may alias r). */
export function boxPlus(out: Mat3, r: Mat3, deltaPhi: Vec3): Mat3 {
  exp(scratchMat, deltaPhi);
  return mat3.multiply(out, r, scratchMat);
}

/** Log(aᵀ·b): rotation vector of the relative rotation from a to b (rad), in the frame of a. */
export function boxMinus(out: Vec3, a: Mat3, b: Mat3): Vec3 {
  mat3.transpose(scratchMat, a);
  mat3.multiply(scratchMat, scratchMat, b);
  return log(out, scratchMat);
}

/** Project a nearly orthonormal matrix back onto SO(3) via its quaternion (cheap, adequate for drift of a few ulp). */
export function orthonormalize(out: Mat3, r: Mat3): Mat3 {
  quat.fromMat3(scratchQuat, r);
  return quat.toMat3(out, scratchQuat);
}
