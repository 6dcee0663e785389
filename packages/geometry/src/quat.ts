/**
 * Unit quaternions, Hamilton convention, stored w-first: Float64Array(4) = [w, x, y, z].
 * q ⊗ v ⊗ q* rotates a vector from the body frame into the reference frame. Functions write into `out`.
 */
import type { Mat3 } from './mat3.ts';
import type { Vec3 } from './vec3.ts';

export type Quat = Float64Array;

export function create(): Quat {
  const q = new Float64Array(4);
  q[0] = 1;
  return q;
}

export function set(out: Quat, w: number, x: number, y: number, z: number): Quat {
  out[0] = w;
  out[1] = x;
  out[2] = y;
  out[3] = z;
  return out;
}

export function identity(out: Quat): Quat {
  return set(out, 1, 0, 0, 0);
}

export function copy(out: Quat, a: Quat): Quat {
  out.set(a);
  return out;
}

/** out = a ⊗ b (out may alias a or b). */
export function multiply(out: Quat, a: Quat, b: Quat): Quat {
  const aw = a[0]!, ax = a[1]!, ay = a[2]!, az = a[3]!;
  const bw = b[0]!, bx = b[1]!, by = b[2]!, bz = b[3]!;
  out[0] = aw * bw - ax * bx - ay * by - az * bz;
  out[1] = aw * bx + ax * bw + ay * bz - az * by;
  out[2] = aw * by - ax * bz + ay * bw + az * bx;
  out[3] = aw * bz + ax * by - ay * bx + az * bw;
  return out;
}

export function conjugate(out: Quat, a: Quat): Quat {
  return set(out, a[0]!, -a[1]!, -a[2]!, -a[3]!);
}

/** Euclidean norm. Plain sqrt rather than Math.hypot: ~10× faster in V8, and quaternions never approach overflow. */
export function norm(a: Quat): number {
  const w = a[0]!, x = a[1]!, y = a[2]!, z = a[3]!;
  return Math.sqrt(w * w + x * x + y * y + z * z);
}

export function normalize(out: Quat, a: Quat): Quat {
  const n = norm(a);
  if (n === 0) return identity(out);
  return set(out, a[0]! / n, a[1]! / n, a[2]! / n, a[3]! / n);
}

/** out = q ⊗ v ⊗ q* for a unit q (out may alias v). */
export function rotateVec3(out: Vec3, q: Quat, v: Vec3): Vec3 {
  const w = q[0]!, x = q[1]!, y = q[2]!, z = q[3]!;
  const vx = v[0]!, vy = v[1]!, vz = v[2]!;
  // t = 2 q_v × v ; v' = v + w t + q_v × t
  const tx = 2 * (y * vz - z * vy);
  const ty = 2 * (z * vx - x * vz);
  const tz = 2 * (x * vy - y * vx);
  out[0] = vx + w * tx + (y * tz - z * ty);
  out[1] = vy + w * ty + (z * tx - x * tz);
  out[2] = vz + w * tz + (x * ty - y * tx);
  return out;
}

/** Exp map: rotation vector (axis·angle, rad) → unit quaternion. Second-order series near zero. */
export function fromRotationVector(out: Quat, rx: number, ry: number, rz: number): Quat {
  const theta2 = rx * rx + ry * ry + rz * rz;
  const theta = Math.sqrt(theta2);
  let w: number;
  let k: number;
  if (theta < 1e-8) {
    w = 1 - theta2 / 8;
    k = 0.5 - theta2 / 48;
  } else {
    const half = 0.5 * theta;
    w = Math.cos(half);
    k = Math.sin(half) / theta;
  }
  return set(out, w, rx * k, ry * k, rz * k);
}

/** Log map: unit quaternion → rotation vector (rad), angle in [0, π]. */
export function toRotationVector(out: Vec3, q: Quat): Vec3 {
  let w = q[0]!, x = q[1]!, y = q[2]!, z = q[3]!;
  if (w < 0) {
    w = -w;
    x = -x;
    y = -y;
    z = -z;
  }
  const s = Math.hypot(x, y, z);
  const k = s < 1e-12 ? 2 / w : (2 * Math.atan2(s, w)) / s;
  out[0] = x * k;
  out[1] = y * k;
  out[2] = z * k;
  return out;
}

/** Rotation angle of a unit quaternion, radians in [0, π]. */
export function angle(q: Quat): number {
  return 2 * Math.atan2(Math.hypot(q[1]!, q[2]!, q[3]!), Math.abs(q[0]!));
}

/** Angle of the rotation a⁻¹ ⊗ b, radians in [0, π]. */
export function angleBetween(a: Quat, b: Quat): number {
  const d = Math.abs(a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]! + a[3]! * b[3]!);
  return 2 * Math.acos(Math.min(1, d));
}

/** Row-major rotation matrix of a unit quaternion. */
export function toMat3(out: Mat3, q: Quat): Mat3 {
  const w = q[0]!, x = q[1]!, y = q[2]!, z = q[3]!;
  const xx = x * x, yy = y * y, zz = z * z, xy = x * y, xz = x * z, yz = y * z, wx = w * x, wy = w * y, wz = w * z;
  out[0] = 1 - 2 * (yy + zz);
  out[1] = 2 * (xy - wz);
  out[2] = 2 * (xz + wy);
  out[3] = 2 * (xy + wz);
  out[4] = 1 - 2 * (xx + zz);
  out[5] = 2 * (yz - wx);
  out[6] = 2 * (xz - wy);
  out[7] = 2 * (yz + wx);
  out[8] = 1 - 2 * (xx + yy);
  return out;
}

/** Unit quaternion of a row-major rotation matrix (Shepperd's method), w ≥ 0. */
export function fromMat3(out: Quat, m: Mat3): Quat {
  const m00 = m[0]!, m01 = m[1]!, m02 = m[2]!, m10 = m[3]!, m11 = m[4]!, m12 = m[5]!, m20 = m[6]!, m21 = m[7]!, m22 = m[8]!;
  const tr = m00 + m11 + m22;
  if (tr > 0) {
    const s = Math.sqrt(tr + 1) * 2;
    set(out, 0.25 * s, (m21 - m12) / s, (m02 - m20) / s, (m10 - m01) / s);
  } else if (m00 > m11 && m00 > m22) {
    const s = Math.sqrt(1 + m00 - m11 - m22) * 2;
    set(out, (m21 - m12) / s, 0.25 * s, (m01 + m10) / s, (m02 + m20) / s);
  } else if (m11 > m22) {
    const s = Math.sqrt(1 + m11 - m00 - m22) * 2;
    set(out, (m02 - m20) / s, (m01 + m10) / s, 0.25 * s, (m12 + m21) / s);
  } else {
    const s = Math.sqrt(1 + m22 - m00 - m11) * 2;
    set(out, (m10 - m01) / s, (m02 + m20) / s, (m12 + m21) / s, 0.25 * s);
  }
  if (out[0]! < 0) set(out, -out[0]!, -out[1]!, -out[2]!, -out[3]!);
  return normalize(out, out);
}

/** Spherical linear interpolation along the shorter arc, t in [0, 1]. */
export function slerp(out: Quat, a: Quat, b: Quat, t: number): Quat {
  const aw = a[0]!, ax = a[1]!, ay = a[2]!, az = a[3]!;
  let bw = b[0]!, bx = b[1]!, by = b[2]!, bz = b[3]!;
  let cos = aw * bw + ax * bx + ay * by + az * bz;
  if (cos < 0) {
    cos = -cos;
    bw = -bw;
    bx = -bx;
    by = -by;
    bz = -bz;
  }
  let k0: number;
  let k1: number;
  if (cos > 0.9999999) {
    k0 = 1 - t;
    k1 = t;
  } else {
    const omega = Math.acos(cos);
    const sin = Math.sin(omega);
    k0 = Math.sin((1 - t) * omega) / sin;
    k1 = Math.sin(t * omega) / sin;
  }
  set(out, k0 * aw + k1 * bw, k0 * ax + k1 * bx, k0 * ay + k1 * by, k0 * az + k1 * bz);
  return normalize(out, out);
}
