import { describe, it, expect } from 'vitest';
import * as pose from './pose.ts';
import * as quat from './quat.ts';
import { PoseInterpolator, poseAt, searchFloor } from './pose-interpolator.ts';
import { createRng, expectClose, randomUnitQuat, randomVec3 } from './testing.ts';

/** 4×4 row-major homogeneous matrix of x ↦ sRx + t: an independent reference for composition. */
function toMat4(p: pose.Pose): number[] {
  const r = quat.toMat3(new Float64Array(9), p.q);
  const s = p.s ?? 1;
  return [
    s * r[0]!, s * r[1]!, s * r[2]!, p.t[0]!,
    s * r[3]!, s * r[4]!, s * r[5]!, p.t[1]!,
    s * r[6]!, s * r[7]!, s * r[8]!, p.t[2]!,
    0, 0, 0, 1,
  ];
}
function mul4(a: number[], b: number[]): number[] {
  const out = new Array<number>(16).fill(0);
  for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) for (let k = 0; k < 4; k++) out[i * 4 + j]! += a[i * 4 + k]! * b[k * 4 + j]!;
  return out;
}
/** Matrix exponential by truncated Taylor series (40 terms; fine for ‖A‖ ≤ 4): reference for se3Exp. */
function expm4(a: number[]): number[] {
  let term = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1];
  const sum = term.slice();
  for (let k = 1; k < 40; k++) {
    term = mul4(term, a).map((v) => v / k);
    for (let i = 0; i < 16; i++) sum[i]! += term[i]!;
  }
  return sum;
}
function randomPose(rng: () => number, sim: boolean): pose.Pose {
  const p: pose.Pose = { q: randomUnitQuat(rng), t: randomVec3(rng, 5) };
  if (sim) p.s = 0.5 + rng() * 2;
  return p;
}

describe('pose.compose / invert / relative (SE(3) and Sim(3))', () => {
  it('compose matches 4×4 homogeneous products on 500 random Sim(3) pairs', () => {
    const rng = createRng(21);
    const out = pose.create();
    for (let i = 0; i < 500; i++) {
      const a = randomPose(rng, i % 2 === 0), b = randomPose(rng, i % 3 === 0);
      pose.compose(out, a, b);
      expectClose(toMat4(out), mul4(toMat4(a), toMat4(b)), 1e-12 * 20, `compose ${i}`); // entries up to ~15
    }
  });
  it('a∘a⁻¹ = identity, a∘relative(a, b) = b, with out aliasing the input', () => {
    const rng = createRng(22);
    for (let i = 0; i < 500; i++) {
      const a = randomPose(rng, i % 2 === 0), b = randomPose(rng, i % 2 === 0);
      const inv = pose.copy(pose.create(), a);
      pose.invert(inv, inv);
      const id = pose.compose(pose.create(), a, inv);
      expectClose(toMat4(id), [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1], 1e-12 * 10, `a∘a⁻¹ ${i}`);
      const rel = pose.copy(pose.create(), b);
      pose.relative(rel, a, rel);
      expectClose(toMat4(pose.compose(rel, a, rel)), toMat4(b), 1e-12 * 20, `a∘(a⁻¹∘b) ${i}`);
    }
  });
  it('transformPoint agrees with the homogeneous matrix', () => {
    const rng = createRng(23);
    const a = randomPose(rng, true), p = randomVec3(rng, 3);
    const m = toMat4(a);
    const ref = [0, 1, 2].map((r) => m[r * 4]! * p[0]! + m[r * 4 + 1]! * p[1]! + m[r * 4 + 2]! * p[2]! + m[r * 4 + 3]!);
    expectClose(pose.transformPoint(new Float64Array(3), a, p), ref, 1e-12 * 10, 'transformPoint');
  });
});

describe('pose.se3Exp / se3Log (Barfoot 2017, ch. 7)', () => {
  it('se3Exp matches the Taylor-series matrix exponential of the twist on 200 random ξ', () => {
    const rng = createRng(24);
    const out = pose.create();
    for (let i = 0; i < 200; i++) {
      const rho = randomVec3(rng, 2), phi = randomVec3(rng, i < 20 ? 1e-6 : 1.7);
      const x = phi[0]!, y = phi[1]!, z = phi[2]!;
      const twist = [0, -z, y, rho[0]!, z, 0, -x, rho[1]!, -y, x, 0, rho[2]!, 0, 0, 0, 0];
      pose.se3Exp(out, [...rho, ...phi]);
      expectClose(toMat4(out), expm4(twist), 1e-12, `se3Exp ${i}`);
    }
  });
  it('se3Log inverts se3Exp for rotation angles below π', () => {
    const rng = createRng(25);
    const p = pose.create(), xi2 = new Float64Array(6);
    for (let i = 0; i < 500; i++) {
      const xi = [...randomVec3(rng, 10), ...randomVec3(rng, 1.8)];
      pose.se3Log(xi2, pose.se3Exp(p, xi));
      expectClose(xi2, xi, 1e-11, `log∘exp ${i}`); // translations up to 10 m
    }
  });
});

/** Trajectory: yaw rate 0.3 rad/s about z, velocity (1, −0.5, 0.1) m/s, irregular sampling. */
function makeTrajectory(n: number): pose.PoseColumns {
  const rng = createRng(26);
  const c = {
    n, t: new Float64Array(n), x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n),
    qw: new Float64Array(n), qx: new Float64Array(n), qy: new Float64Array(n), qz: new Float64Array(n),
  };
  let t = 100;
  for (let i = 0; i < n; i++) {
    c.t[i] = t;
    c.x[i] = t;
    c.y[i] = -0.5 * t;
    c.z[i] = 0.1 * t;
    c.qw[i] = Math.cos(0.15 * t);
    c.qz[i] = Math.sin(0.15 * t);
    t += 0.05 + 0.1 * rng();
  }
  return c;
}

describe('PoseInterpolator', () => {
  const cols = makeTrajectory(5000);
  it('recovers constant-rate yaw and constant velocity exactly between samples (sequential and random)', () => {
    const it1 = new PoseInterpolator(cols);
    const out = pose.create();
    const t0 = cols.t[0]!, t1 = cols.t[cols.n - 1]!;
    const rng = createRng(27);
    for (let k = 0; k < 10000; k++) {
      // first half monotone sweep, second half random access through the same object
      const tq = k < 5000 ? t0 + ((t1 - t0) * k) / 4999 : t0 + (t1 - t0) * rng();
      expect(it1.at(out, tq)).toBe(true);
      // slerp at constant rate about a fixed axis is exact; lerp at constant velocity is exact
      expectClose(out.t, [tq, -0.5 * tq, 0.1 * tq], 1e-9, `position at ${tq}`); // |t| ≈ 500 s: ~ulp·t
      const s = out.q[0]! * Math.cos(0.15 * tq) + out.q[3]! * Math.sin(0.15 * tq) < 0 ? -1 : 1;
      expectClose([s * out.q[0]!, s * out.q[3]!], [Math.cos(0.15 * tq), Math.sin(0.15 * tq)], 1e-9, 'yaw quat');
    }
  });
  it('rejects times outside the span and NaN; handles duplicate timestamps', () => {
    const it1 = new PoseInterpolator(cols);
    const out = pose.create();
    expect(it1.at(out, cols.t[0]! - 1e-9)).toBe(false);
    expect(it1.at(out, cols.t[cols.n - 1]! + 1e-9)).toBe(false);
    expect(it1.at(out, Number.NaN)).toBe(false);
    expect(poseAt(out, cols, Number.NaN)).toBe(false);
    expect(it1.at(out, cols.t[cols.n - 1]!)).toBe(true);
    expectClose(out.t[0]!, cols.x[cols.n - 1]!, 0, 'last sample');
    const dup = { ...cols, n: 3, t: Float64Array.of(1, 1, 2) };
    expect(poseAt(out, dup, 1)).toBe(true);
    expectClose(out.t[0]!, cols.x[1]!, 0, 'duplicate time picks the later equal sample');
  });
  it('searchFloor returns the last index with t[i] ≤ x', () => {
    const t = Float64Array.of(0, 1, 1, 2, 5);
    expect([-1, 0, 2, 2, 3, 4, 4].map((_, k) => searchFloor(t, [-0.5, 0.5, 1, 1.5, 2, 5, 9][k]!))).toEqual([
      -1, 0, 2, 2, 3, 4, 4,
    ]);
  });
});
