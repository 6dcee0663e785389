import { describe, it } from 'vitest';
import { quat as glQuat, vec3 as glVec3 } from 'gl-matrix';
import * as quat from './quat.ts';
import * as mat3 from './mat3.ts';
import { createRng, expectClose, randomUnitQuat, randomVec3 } from './testing.ts';

// Reference library: the general-purpose `gl-matrix` npm package (v3, Hamilton convention, quaternions stored
// [x, y, z, w]; mat3 column-major). We hand it Float64Array outputs so it computes in double precision.
// Tolerance 1e-12: both sides are a handful of double operations on unit-magnitude numbers (common practice).
const N = 1000;
const TOL = 1e-12;

function toGl(q: Float64Array): Float64Array {
  return Float64Array.of(q[1]!, q[2]!, q[3]!, q[0]!);
}
function fromGl(g: Float64Array): Float64Array {
  return Float64Array.of(g[3]!, g[0]!, g[1]!, g[2]!);
}
/** q and −q are the same rotation: flip b onto a's hemisphere before comparing. */
function sameHemisphere(a: Float64Array, b: Float64Array): Float64Array {
  const d = a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]! + a[3]! * b[3]!;
  return d < 0 ? Float64Array.of(-b[0]!, -b[1]!, -b[2]!, -b[3]!) : b;
}

describe('quat.multiply against gl-matrix quat.multiply', () => {
  it('agrees on 1,000 random pairs', () => {
    const rng = createRng(1);
    const out = quat.create();
    const g = new Float64Array(4);
    for (let i = 0; i < N; i++) {
      const a = randomUnitQuat(rng), b = randomUnitQuat(rng);
      quat.multiply(out, a, b);
      glQuat.multiply(g, toGl(a), toGl(b));
      expectClose(out, fromGl(g), TOL, `multiply case ${i}`);
    }
  });
});

describe('quat.rotateVec3 against gl-matrix vec3.transformQuat', () => {
  it('agrees on 1,000 random rotations of random vectors', () => {
    const rng = createRng(2);
    const out = new Float64Array(3);
    const g = new Float64Array(3);
    for (let i = 0; i < N; i++) {
      const q = randomUnitQuat(rng), v = randomVec3(rng, 10);
      quat.rotateVec3(out, q, v);
      glVec3.transformQuat(g, v, toGl(q));
      expectClose(out, g, 10 * TOL, `rotate case ${i}`); // vectors up to 10 long: scale the tolerance
    }
  });
});

describe('quat.slerp against gl-matrix quat.slerp', () => {
  it('agrees on 1,000 random pairs and fractions', () => {
    const rng = createRng(3);
    const out = quat.create();
    const g = new Float64Array(4);
    for (let i = 0; i < N; i++) {
      const a = randomUnitQuat(rng);
      const b = sameHemisphere(a, randomUnitQuat(rng));
      const t = rng();
      quat.slerp(out, a, b, t);
      glQuat.slerp(g, toGl(a), toGl(b), t);
      expectClose(out, fromGl(g), 1e-11, `slerp case ${i}`); // 1e-11: sin ratios divide by sin(ω)
    }
  });
});

describe('quat.fromRotationVector against gl-matrix quat.setAxisAngle', () => {
  it('agrees on 1,000 random axes and angles in [0, π]', () => {
    const rng = createRng(4);
    const out = quat.create();
    const g = new Float64Array(4);
    const axis = new Float64Array(3);
    for (let i = 0; i < N; i++) {
      const v = randomVec3(rng);
      const n = Math.hypot(v[0]!, v[1]!, v[2]!);
      axis.set([v[0]! / n, v[1]! / n, v[2]! / n]);
      const angleRad = rng() * Math.PI;
      quat.fromRotationVector(out, axis[0]! * angleRad, axis[1]! * angleRad, axis[2]! * angleRad);
      glQuat.setAxisAngle(g, axis, angleRad);
      expectClose(out, fromGl(g), TOL, `axis-angle case ${i}`);
    }
  });
});

describe('quat.toRotationVector against gl-matrix quat.getAxisAngle', () => {
  it('agrees on 1,000 random unit quaternions', () => {
    const rng = createRng(5);
    const out = new Float64Array(3);
    const axis = new Float64Array(3);
    for (let i = 0; i < N; i++) {
      const q = randomUnitQuat(rng);
      let angleRad = glQuat.getAxisAngle(axis, toGl(q));
      if (angleRad > Math.PI) angleRad -= 2 * Math.PI; // gl-matrix returns (0, 2π); ours wraps to [0, π]
      quat.toRotationVector(out, q);
      // 1e-10: gl-matrix reads the angle with acos(w), which loses digits as |w| → 1
      expectClose(out, [axis[0]! * angleRad, axis[1]! * angleRad, axis[2]! * angleRad], 1e-10, `log case ${i}`);
    }
  });
});

describe('quat.fromMat3 against gl-matrix quat.fromMat3', () => {
  it('agrees on 1,000 random rotation matrices (up to the sign of q)', () => {
    const rng = createRng(6);
    const r = mat3.create();
    const colMajor = mat3.create();
    const out = quat.create();
    const g = new Float64Array(4);
    for (let i = 0; i < N; i++) {
      const q = randomUnitQuat(rng);
      quat.toMat3(r, q);
      mat3.transpose(colMajor, r); // gl-matrix matrices are column-major
      glQuat.fromMat3(g, colMajor);
      quat.fromMat3(out, r);
      expectClose(out, sameHemisphere(out, fromGl(g)), TOL, `fromMat3 case ${i}`);
      expectClose(out, sameHemisphere(out, q), TOL, `round trip case ${i}`);
    }
  });
});
