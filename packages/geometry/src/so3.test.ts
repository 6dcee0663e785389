import { describe, it } from 'vitest';
import * as so3 from './so3.ts';
import * as mat3 from './mat3.ts';
import * as quat from './quat.ts';
import { createRng, expectClose, randomUnitQuat, randomVec3 } from './testing.ts';

const I3 = mat3.create();

function randomRotationVector(rng: () => number, maxAngleRad: number): Float64Array {
  const v = randomVec3(rng);
  const n = Math.hypot(v[0]!, v[1]!, v[2]!);
  const a = rng() * maxAngleRad;
  return Float64Array.of((v[0]! / n) * a, (v[1]! / n) * a, (v[2]! / n) * a);
}

describe('so3.exp matches the quaternion exponential', () => {
  it('agrees with quat.fromRotationVector → toMat3 on 1,000 random vectors (tol 1e-14, double rounding)', () => {
    const rng = createRng(11);
    const r = mat3.create(), rq = mat3.create(), q = quat.create();
    for (let i = 0; i < 1000; i++) {
      const phi = randomRotationVector(rng, Math.PI);
      so3.exp(r, phi);
      quat.toMat3(rq, quat.fromRotationVector(q, phi[0]!, phi[1]!, phi[2]!));
      expectClose(r, rq, 1e-14 * 10, `exp case ${i}`);
      expectClose(mat3.determinant(r), 1, 1e-14, 'det');
    }
  });
});

describe('so3.log inverts so3.exp', () => {
  it('round-trips 1,000 random vectors with angle < π', () => {
    const rng = createRng(12);
    const r = mat3.create(), phi2 = new Float64Array(3);
    for (let i = 0; i < 1000; i++) {
      const phi = randomRotationVector(rng, Math.PI - 1e-6);
      so3.log(phi2, so3.exp(r, phi));
      expectClose(phi2, phi, 1e-12, `log∘exp case ${i}`);
    }
  });
  it('is accurate near the identity (angle 1e-10 rad)', () => {
    const phi = Float64Array.of(1e-10, -2e-10, 3e-11);
    const out = so3.log(new Float64Array(3), so3.exp(mat3.create(), phi));
    expectClose(out, phi, 1e-22, 'tiny angle'); // relative 1e-12 of the input
  });
  it('is accurate near π (angle π − 1e-9) and at π up to the sign of the axis', () => {
    const axis = [2 / 7, 3 / 7, 6 / 7];
    const near = Float64Array.from(axis, (a) => a * (Math.PI - 1e-9));
    const out = so3.log(new Float64Array(3), so3.exp(mat3.create(), near));
    expectClose(out, near, 1e-8, 'near π'); // near π the axis is fixed by a sqrt of R+I: 1e-8 is ~√ε
    const at = Float64Array.from(axis, (a) => a * Math.PI);
    const out2 = so3.log(new Float64Array(3), so3.exp(mat3.create(), at));
    const s = out2[0]! * at[0]! < 0 ? -1 : 1;
    expectClose(Float64Array.from(out2, (v) => v * s), at, 1e-7, 'at π');
  });
});

describe('so3.hat / vee', () => {
  it('vee(hat(v)) = v and hat(v)·u = v × u', () => {
    const v = Float64Array.of(0.3, -1.2, 2.5), u = Float64Array.of(-0.7, 0.1, 0.4);
    const h = so3.hat(mat3.create(), v);
    expectClose(so3.vee(new Float64Array(3), h), v, 0, 'vee∘hat');
    const hu = mat3.mulVec3(new Float64Array(3), h, u);
    expectClose(hu, [-1.2 * 0.4 - 2.5 * 0.1, 2.5 * -0.7 - 0.3 * 0.4, 0.3 * 0.1 - -1.2 * -0.7], 1e-15, 'cross');
  });
});

describe('so3.rightJacobian satisfies Exp(φ + δ) ≈ Exp(φ)·Exp(Jr δ) (Forster et al. 2017)', () => {
  it('matches central finite differences on 200 random φ, including tiny angles', () => {
    const rng = createRng(13);
    const jr = mat3.create(), jrInv = mat3.create(), prod = mat3.create();
    const ra = mat3.create(), rb = mat3.create(), d = new Float64Array(3), dm = new Float64Array(3);
    const h = 1e-6;
    for (let i = 0; i < 200; i++) {
      const phi = randomRotationVector(rng, i < 20 ? 1e-5 : 3.0);
      so3.rightJacobian(jr, phi);
      for (let k = 0; k < 3; k++) {
        const p = Float64Array.from(phi), m = Float64Array.from(phi);
        p[k]! += h;
        m[k]! -= h;
        so3.exp(ra, phi);
        so3.boxMinus(d, ra, so3.exp(rb, p));
        so3.boxMinus(dm, ra, so3.exp(rb, m));
        const col = [(d[0]! - dm[0]!) / (2 * h), (d[1]! - dm[1]!) / (2 * h), (d[2]! - dm[2]!) / (2 * h)];
        // central difference error O(h²) plus rounding ε/h ≈ 1e-10 (common practice)
        expectClose(col, [jr[k]!, jr[3 + k]!, jr[6 + k]!], 1e-8, `Jr column ${k} case ${i}`);
      }
      so3.rightJacobianInverse(jrInv, phi);
      expectClose(mat3.multiply(prod, jr, jrInv), I3, 1e-12, `Jr·Jr⁻¹ case ${i}`);
      so3.leftJacobian(prod, phi);
      mat3.multiply(prod, prod, so3.leftJacobianInverse(jrInv, phi));
      expectClose(prod, I3, 1e-12, `Jl·Jl⁻¹ case ${i}`);
    }
  });
});

describe('so3 quaternion ↔ matrix round trip', () => {
  it('toQuat(fromQuat(q)) = ±q on 1,000 random quaternions', () => {
    const rng = createRng(14);
    const r = mat3.create(), q2 = quat.create();
    for (let i = 0; i < 1000; i++) {
      const q = randomUnitQuat(rng);
      so3.toQuat(q2, so3.fromQuat(r, q));
      const s = q2[0]! * q[0]! + q2[1]! * q[1]! + q2[2]! * q[2]! + q2[3]! * q[3]! < 0 ? -1 : 1;
      expectClose(Float64Array.from(q2, (v) => v * s), q, 1e-14 * 10, `round trip ${i}`);
    }
  });
});
