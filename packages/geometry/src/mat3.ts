/** 3×3 matrices, row-major Float64Array(9): m[r*3 + c]. Functions write into `out` and return it. */
import type { Vec3 } from './vec3.ts';

export type Mat3 = Float64Array;

export function create(): Mat3 {
  return identity(new Float64Array(9));
}

export function identity(out: Mat3): Mat3 {
  out.fill(0);
  out[0] = 1;
  out[4] = 1;
  out[8] = 1;
  return out;
}

export function copy(out: Mat3, a: Mat3): Mat3 {
  out.set(a);
  return out;
}

/** out = a·b (out may alias a or b). */
export function multiply(out: Mat3, a: Mat3, b: Mat3): Mat3 {
  const a0 = a[0]!, a1 = a[1]!, a2 = a[2]!, a3 = a[3]!, a4 = a[4]!, a5 = a[5]!, a6 = a[6]!, a7 = a[7]!, a8 = a[8]!;
  const b0 = b[0]!, b1 = b[1]!, b2 = b[2]!, b3 = b[3]!, b4 = b[4]!, b5 = b[5]!, b6 = b[6]!, b7 = b[7]!, b8 = b[8]!;
  out[0] = a0 * b0 + a1 * b3 + a2 * b6;
  out[1] = a0 * b1 + a1 * b4 + a2 * b7;
  out[2] = a0 * b2 + a1 * b5 + a2 * b8;
  out[3] = a3 * b0 + a4 * b3 + a5 * b6;
  out[4] = a3 * b1 + a4 * b4 + a5 * b7;
  out[5] = a3 * b2 + a4 * b5 + a5 * b8;
  out[6] = a6 * b0 + a7 * b3 + a8 * b6;
  out[7] = a6 * b1 + a7 * b4 + a8 * b7;
  out[8] = a6 * b2 + a7 * b5 + a8 * b8;
  return out;
}

/** out = aᵀ (out may alias a). */
export function transpose(out: Mat3, a: Mat3): Mat3 {
  const a1 = a[1]!, a2 = a[2]!, a5 = a[5]!;
  out[0] = a[0]!;
  out[1] = a[3]!;
  out[2] = a[6]!;
  out[3] = a1;
  out[4] = a[4]!;
  out[5] = a[7]!;
  out[6] = a2;
  out[7] = a5;
  out[8] = a[8]!;
  return out;
}

/** out = m·v (out must not alias v). */
export function mulVec3(out: Vec3, m: Mat3, v: Vec3): Vec3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = m[0]! * x + m[1]! * y + m[2]! * z;
  out[1] = m[3]! * x + m[4]! * y + m[5]! * z;
  out[2] = m[6]! * x + m[7]! * y + m[8]! * z;
  return out;
}

/** out = mᵀ·v */
export function mulTransposeVec3(out: Vec3, m: Mat3, v: Vec3): Vec3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = m[0]! * x + m[3]! * y + m[6]! * z;
  out[1] = m[1]! * x + m[4]! * y + m[7]! * z;
  out[2] = m[2]! * x + m[5]! * y + m[8]! * z;
  return out;
}

/** Skew-symmetric matrix [v]× such that [v]× u = v × u. */
export function hat(out: Mat3, v: Vec3): Mat3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = 0;
  out[1] = -z;
  out[2] = y;
  out[3] = z;
  out[4] = 0;
  out[5] = -x;
  out[6] = -y;
  out[7] = x;
  out[8] = 0;
  return out;
}

export function determinant(a: Mat3): number {
  return (
    a[0]! * (a[4]! * a[8]! - a[5]! * a[7]!) - a[1]! * (a[3]! * a[8]! - a[5]! * a[6]!) + a[2]! * (a[3]! * a[7]! - a[4]! * a[6]!)
  );
}
