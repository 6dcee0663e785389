import { describe, it, expect } from 'vitest';
import { umeyama, applySimilarity, type PointColumns } from './umeyama.ts';
import * as mat3 from './mat3.ts';
import * as quat from './quat.ts';
import * as so3 from './so3.ts';
import { createRng, expectClose, gaussian, randomUnitQuat } from './testing.ts';

function cols(pts: number[][]): PointColumns {
  return {
    x: Float64Array.from(pts, (p) => p[0]!),
    y: Float64Array.from(pts, (p) => p[1]!),
    z: pts[0]!.length > 2 ? Float64Array.from(pts, (p) => p[2]!) : null,
  };
}
function randomCloud(rng: () => number, n: number, spread = 10): Cloud {
  return {
    x: Float64Array.from({ length: n }, () => spread * gaussian(rng)),
    y: Float64Array.from({ length: n }, () => spread * gaussian(rng)),
    z: Float64Array.from({ length: n }, () => spread * gaussian(rng)),
  };
}
type Cloud = { x: Float64Array; y: Float64Array; z: Float64Array };
function transformed(src: PointColumns, r: Float64Array, t: number[], c: number): Cloud {
  const n = src.x.length;
  const out = { x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n) };
  applySimilarity(out, src, r, Float64Array.from(t), c);
  return out;
}

describe('umeyama: worked 2-D example of Umeyama (1991)', () => {
  it('X = {(0,0),(1,0),(0,2)}, Y = {(0,0),(−1,0),(0,2)} → R = [[0.8321, 0.5547],[−0.5547, 0.8321]], c = 0.7211, t = (−0.8, 0.4)', () => {
    // S. Umeyama, IEEE TPAMI 13(4), 1991, worked example — from memory; re-derived numerically (CHECK-VALUES.md).
    // Published to 4 decimals, hence tolerance 5e-5.
    const res = umeyama(cols([[0, 0], [1, 0], [0, 2]]), cols([[0, 0], [-1, 0], [0, 2]]));
    if (!res.ok) throw new Error(res.reason);
    expectClose([res.r[0]!, res.r[1]!, res.r[3]!, res.r[4]!], [0.8321, 0.5547, -0.5547, 0.8321], 5e-5, 'R');
    expectClose(res.scale, 0.7211, 5e-5, 'c');
    expectClose([res.t[0]!, res.t[1]!], [-0.8, 0.4], 5e-5, 't');
    // exact values from the derivation: c = √52/10, cos θ = 6/√52
    expectClose(res.scale, Math.sqrt(52) / 10, 1e-15, 'c exact');
    expect(res.n).toBe(3);
  });
});

describe('umeyama: exact recovery of random similarities (3-D)', () => {
  it('recovers R, t, c to 1e-10 on 300 random problems', () => {
    const rng = createRng(51);
    const r = mat3.create();
    for (let k = 0; k < 300; k++) {
      quat.toMat3(r, randomUnitQuat(rng));
      const t = [100 * gaussian(rng), 100 * gaussian(rng), 10 * gaussian(rng)];
      const c = 0.2 + 3 * rng();
      const src = randomCloud(rng, 4 + (k % 30));
      const res = umeyama(src, transformed(src, r, t, c));
      if (!res.ok) throw new Error(`case ${k}: ${res.reason}`);
      expectClose(res.r, r, 1e-10, `R case ${k}`);
      expectClose(res.t, t, 1e-8, `t case ${k}`); // |t| ~ 100 m
      expectClose(res.scale, c, 1e-10, `c case ${k}`);
      expectClose(res.rms, 0, 1e-8, `rms case ${k}`);
    }
  });
  it('returns a proper rotation (det +1) when the best orthogonal map is a reflection', () => {
    const rng = createRng(52);
    const src = randomCloud(rng, 30);
    const mirrored = { x: src.x, y: src.y, z: Float64Array.from(src.z, (v) => -v) };
    const res = umeyama(src, mirrored);
    if (!res.ok) throw new Error(res.reason);
    expectClose(mat3.determinant(res.r), 1, 1e-12, 'det R');
    expect(res.rms).toBeGreaterThan(1);
  });
});

describe('umeyama: options', () => {
  it('fixScale gives c = 1 and recovers a rigid transform exactly', () => {
    const rng = createRng(53);
    const r = quat.toMat3(mat3.create(), randomUnitQuat(rng));
    const src = randomCloud(rng, 50);
    const res = umeyama(src, transformed(src, r, [1, 2, 3], 1), { fixScale: true });
    if (!res.ok) throw new Error(res.reason);
    expect(res.scale).toBe(1);
    expectClose(res.r, r, 1e-12, 'R');
    expectClose(res.t, [1, 2, 3], 1e-11, 't');
  });
  it('yawOnly recovers a rotation about z with scale and 3-D translation', () => {
    const rng = createRng(54);
    const yaw = 2.3;
    const r = so3.exp(mat3.create(), Float64Array.of(0, 0, yaw));
    const src = randomCloud(rng, 40);
    const res = umeyama(src, transformed(src, r, [5, -7, 0.5], 1.7), { yawOnly: true });
    if (!res.ok) throw new Error(res.reason);
    expectClose(res.r, r, 1e-12, 'R');
    expectClose(res.scale, 1.7, 1e-12, 'c');
    expectClose(res.t, [5, -7, 0.5], 1e-11, 't');
  });
  it('yawOnly is optimal among yaw rotations when the data also contain a tilt', () => {
    const rng = createRng(55);
    const r = so3.exp(mat3.create(), Float64Array.of(0.05, -0.03, 0.8));
    const src = randomCloud(rng, 60);
    const dst = transformed(src, r, [0, 0, 0], 1);
    const res = umeyama(src, dst, { yawOnly: true, fixScale: true });
    if (!res.ok) throw new Error(res.reason);
    const sse = (yaw: number): number => {
      const ry = so3.exp(mat3.create(), Float64Array.of(0, 0, yaw));
      const p = transformed(src, ry, Array.from(res.t), 1);
      let s = 0;
      for (let i = 0; i < 60; i++) s += (p.x[i]! - dst.x[i]!) ** 2 + (p.y[i]! - dst.y[i]!) ** 2 + (p.z[i]! - dst.z[i]!) ** 2;
      return s;
    };
    const yawHat = Math.atan2(res.r[3]!, res.r[0]!);
    expect(sse(yawHat)).toBeLessThan(sse(yawHat + 1e-4));
    expect(sse(yawHat)).toBeLessThan(sse(yawHat - 1e-4));
  });
  it('weights of zero and NaN coordinates exclude points (gross outliers ignored)', () => {
    const rng = createRng(56);
    const r = quat.toMat3(mat3.create(), randomUnitQuat(rng));
    const src = randomCloud(rng, 30);
    const dst = transformed(src, r, [3, 2, 1], 0.9);
    const weights = new Float64Array(30).fill(1);
    dst.x[4] = 1e6;
    weights[4] = 0;
    dst.z[9] = Number.NaN;
    const res = umeyama(src, dst, { weights });
    if (!res.ok) throw new Error(res.reason);
    expect(res.n).toBe(28);
    expectClose(res.r, r, 1e-11, 'R');
    expectClose(res.scale, 0.9, 1e-11, 'c');
  });
  it('weighted solution equals the unweighted one on duplicated points (weight 2 ≡ two copies)', () => {
    const rng = createRng(57);
    const src = randomCloud(rng, 12);
    const dst = randomCloud(rng, 12);
    const w = Float64Array.from({ length: 12 }, (_, i) => (i < 4 ? 2 : 1));
    const dup = (p: Cloud): Cloud => ({
      x: Float64Array.from([...p.x, ...p.x.subarray(0, 4)]),
      y: Float64Array.from([...p.y, ...p.y.subarray(0, 4)]),
      z: Float64Array.from([...p.z, ...p.z.subarray(0, 4)]),
    });
    const a = umeyama(src, dst, { weights: w });
    const b = umeyama(dup(src), dup(dst));
    if (!a.ok || !b.ok) throw new Error('alignment failed');
    expectClose(a.r, b.r, 1e-12, 'R');
    expectClose(a.t, b.t, 1e-11, 't');
    expectClose(a.rms, b.rms, 1e-12, 'rms');
  });
  it('reports collinear, coincident and too-small inputs as values', () => {
    const line = cols([[0, 0, 0], [1, 1, 1], [2, 2, 2], [3, 3, 3]]);
    expect(umeyama(line, line)).toMatchObject({ ok: false, reason: 'degenerate' });
    const same = cols([[1, 1], [1, 1], [1, 1]]);
    expect(umeyama(same, same)).toMatchObject({ ok: false, reason: 'degenerate' });
    expect(umeyama(cols([[0, 0, 0], [1, 0, 0]]), cols([[0, 0, 0], [1, 0, 0]]))).toMatchObject({ ok: false, reason: 'too-few-points' });
    expect(() => umeyama(cols([[0, 0, 0]]), cols([[0, 0], [1, 1]]), { dims: 3 })).toThrow(RangeError);
  });
});
