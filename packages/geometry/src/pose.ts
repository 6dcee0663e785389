/**
 * Rigid (SE(3)) and similarity (Sim(3)) transforms as a small struct { q, t, s? } acting as x ↦ s·R(q)·x + t.
 * `s` absent means 1 (a rigid pose). Functions write into `out` and return it; all of them allow `out` to alias
 * their inputs. Naming follows the house style: `worldTBody` maps body-frame points into the world frame.
 */
import * as quat from './quat.ts';
import type { Quat } from './quat.ts';
import * as so3 from './so3.ts';
import * as mat3 from './mat3.ts';
import type { Mat3 } from './mat3.ts';
import type { Vec3 } from './vec3.ts';

export interface Pose {
  /** Unit quaternion [w, x, y, z] (Hamilton) rotating the child frame into the parent frame. */
  q: Quat;
  /** Translation of the child origin in the parent frame, metres. */
  t: Vec3;
  /** Scale of a Sim(3) transform; absent = 1. */
  s?: number;
}

/** Columnar trajectory: any struct with these arrays (the bundle's OdometryColumns fits). */
export interface PoseColumns {
  n: number;
  t: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  qw: Float64Array;
  qx: Float64Array;
  qy: Float64Array;
  qz: Float64Array;
}

const sq = quat.create();
const sv = new Float64Array(3);
const sm: Mat3 = mat3.create();
const sm2: Mat3 = mat3.create();

export function create(): Pose {
  return { q: quat.create(), t: new Float64Array(3) };
}

export function identity(out: Pose): Pose {
  quat.identity(out.q);
  out.t.fill(0);
  if (out.s !== undefined) out.s = 1;
  return out;
}

export function copy(out: Pose, a: Pose): Pose {
  out.q.set(a.q);
  out.t.set(a.t);
  if (a.s !== undefined || out.s !== undefined) out.s = a.s ?? 1;
  return out;
}

/** Pose from components; `s` given makes it a Sim(3) transform. */
export function fromValues(
  out: Pose,
  qw: number, qx: number, qy: number, qz: number,
  tx: number, ty: number, tz: number,
  s?: number,
): Pose {
  quat.set(out.q, qw, qx, qy, qz);
  out.t[0] = tx;
  out.t[1] = ty;
  out.t[2] = tz;
  if (s !== undefined || out.s !== undefined) out.s = s ?? 1;
  return out;
}

/** Reads row i of a columnar trajectory (quaternion renormalised: files carry rounded values). */
export function fromColumns(out: Pose, cols: PoseColumns, i: number): Pose {
  quat.set(out.q, cols.qw[i]!, cols.qx[i]!, cols.qy[i]!, cols.qz[i]!);
  quat.normalize(out.q, out.q);
  out.t[0] = cols.x[i]!;
  out.t[1] = cols.y[i]!;
  out.t[2] = cols.z[i]!;
  return out;
}

/** out = a∘b, i.e. x ↦ a(b(x)): q = qa⊗qb, t = ta + sa·Ra·tb, s = sa·sb. */
export function compose(out: Pose, a: Pose, b: Pose): Pose {
  const sa = a.s ?? 1;
  quat.rotateVec3(sv, a.q, b.t);
  const tx = a.t[0]! + sa * sv[0]!, ty = a.t[1]! + sa * sv[1]!, tz = a.t[2]! + sa * sv[2]!;
  quat.multiply(out.q, a.q, b.q);
  out.t[0] = tx;
  out.t[1] = ty;
  out.t[2] = tz;
  if (a.s !== undefined || b.s !== undefined || out.s !== undefined) out.s = sa * (b.s ?? 1);
  return out;
}

/** out = a⁻¹: q = q*, s = 1/s, t = −(1/s)·R*·t. */
export function invert(out: Pose, a: Pose): Pose {
  const sInv = 1 / (a.s ?? 1);
  quat.conjugate(out.q, a.q);
  quat.rotateVec3(out.t, out.q, a.t);
  out.t[0] = -sInv * out.t[0]!;
  out.t[1] = -sInv * out.t[1]!;
  out.t[2] = -sInv * out.t[2]!;
  if (a.s !== undefined || out.s !== undefined) out.s = sInv;
  return out;
}

/** out = s·R·p + t (out may alias p). */
export function transformPoint(out: Vec3, a: Pose, p: Vec3): Vec3 {
  const s = a.s ?? 1;
  quat.rotateVec3(out, a.q, p);
  out[0] = s * out[0]! + a.t[0]!;
  out[1] = s * out[1]! + a.t[1]!;
  out[2] = s * out[2]! + a.t[2]!;
  return out;
}

/** Relative pose a⁻¹∘b: b expressed in the frame of a (e.g. body at tB seen from body at tA). */
export function relative(out: Pose, a: Pose, b: Pose): Pose {
  // Inline a⁻¹∘b so out may alias a or b without a scratch Pose.
  const sInv = 1 / (a.s ?? 1);
  quat.conjugate(sq, a.q);
  sv[0] = b.t[0]! - a.t[0]!;
  sv[1] = b.t[1]! - a.t[1]!;
  sv[2] = b.t[2]! - a.t[2]!;
  quat.rotateVec3(sv, sq, sv);
  const hasScale = a.s !== undefined || b.s !== undefined || out.s !== undefined;
  const sOut = sInv * (b.s ?? 1);
  quat.multiply(out.q, sq, b.q);
  out.t[0] = sInv * sv[0]!;
  out.t[1] = sInv * sv[1]!;
  out.t[2] = sInv * sv[2]!;
  if (hasScale) out.s = sOut;
  return out;
}

/** Geodesic-in-rotation, straight-in-translation interpolation: slerp(qa, qb, f), lerp(ta, tb, f), f in [0, 1]. */
export function interpolate(out: Pose, a: Pose, b: Pose, f: number): Pose {
  const g = 1 - f;
  out.t[0] = g * a.t[0]! + f * b.t[0]!;
  out.t[1] = g * a.t[1]! + f * b.t[1]!;
  out.t[2] = g * a.t[2]! + f * b.t[2]!;
  quat.slerp(out.q, a.q, b.q, f);
  if (a.s !== undefined || b.s !== undefined || out.s !== undefined) out.s = g * (a.s ?? 1) + f * (b.s ?? 1);
  return out;
}

/** Rotation angle (rad) and translation distance (m) between two poses, as used for loop and drift checks. */
export function distance(a: Pose, b: Pose): { angleRad: number; translationM: number } {
  return {
    angleRad: quat.angleBetween(a.q, b.q),
    translationM: Math.hypot(a.t[0]! - b.t[0]!, a.t[1]! - b.t[1]!, a.t[2]! - b.t[2]!),
  };
}

/**
 * SE(3) exponential: tangent ξ = [ρx, ρy, ρz, φx, φy, φz] (translation part first) → pose with R = Exp(φ),
 * t = Jl(φ)·ρ. T. D. Barfoot, "State Estimation for Robotics", 2017, ch. 7 (from memory). Scale is left untouched.
 */
export function se3Exp(out: Pose, xi: ArrayLike<number>): Pose {
  sv[0] = xi[3]!;
  sv[1] = xi[4]!;
  sv[2] = xi[5]!;
  so3.leftJacobian(sm, sv);
  quat.fromRotationVector(out.q, sv[0]!, sv[1]!, sv[2]!);
  sv[0] = xi[0]!;
  sv[1] = xi[1]!;
  sv[2] = xi[2]!;
  mat3.mulVec3(out.t, sm, sv);
  return out;
}

/**
 * SE(3) logarithm, inverse of se3Exp: φ = Log(R), ρ = Jl⁻¹(φ)·t; writes [ρ, φ] into out[0..5].
 * Barfoot 2017, ch. 7. Used for pose-graph residuals; the scale of a Sim(3) input is ignored.
 */
export function se3Log(out: Float64Array, a: Pose): Float64Array {
  quat.toRotationVector(sv, a.q);
  out[3] = sv[0]!;
  out[4] = sv[1]!;
  out[5] = sv[2]!;
  so3.leftJacobianInverse(sm2, sv);
  mat3.mulVec3(sv, sm2, a.t);
  out[0] = sv[0]!;
  out[1] = sv[1]!;
  out[2] = sv[2]!;
  return out;
}

/** Rotation matrix (row-major) of a pose. */
export function rotationMatrix(out: Mat3, a: Pose): Mat3 {
  return quat.toMat3(out, a.q);
}
