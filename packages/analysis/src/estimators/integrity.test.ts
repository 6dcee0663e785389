import { describe, expect, it } from 'vitest';
import { geodesy } from '@plumbline/geometry';
import { checkTiming, findSaturation, findStationary } from './integrity.ts';
import { checkUnits } from './units.ts';
import { createRng, gaussian, makeImu, makeOdometry } from './test-signals.ts';

describe('stream timing', () => {
  it('counts gaps (> 3 periods), duplicates, backward steps and non-finite values', () => {
    const t = Float64Array.from({ length: 1000 }, (_, i) => i * 0.005);
    for (let i = 500; i < 1000; i++) t[i] = t[i]! + 0.1; // one 105 ms gap after sample 499
    t[200] = t[199]!; // duplicate
    t[300] = t[299]! - 0.001; // backwards
    const v = new Float64Array(1000);
    v[10] = Number.NaN;
    v[11] = Number.POSITIVE_INFINITY;
    const r = checkTiming(t, 1000, 200, [v]);
    expect(r.gaps).toHaveLength(1);
    expect(r.gaps[0]!.tEnd - r.gaps[0]!.tStart).toBeCloseTo(0.105, 9);
    expect(r.duplicateTimestamps).toBe(1);
    expect(r.nonMonotonicTimestamps).toBe(1);
    expect(r.nonFiniteValues).toBe(2);
    expect(r.measuredRateHz!).toBeCloseTo(999 / t[999]!, 9);
  });
});

describe('saturation', () => {
  it('reports runs pinned at the declared range, per axis', () => {
    const imu = makeImu(400, 200);
    for (let i = 0; i < 400; i++) imu.az[i] = 9.8;
    for (let i = 100; i < 107; i++) imu.ax[i] = 78.4532; // 7 samples at +range
    imu.gz[300] = -8.7; // one sample at −range
    const runs = findSaturation(imu, 8.7, 78.4532);
    expect(runs.map((r) => [r.axis, r.samples])).toEqual([['ax', 7], ['gz', 1]]);
  });

  it('does not count samples far beyond the declared range as clipping (a unit or range error, not saturation)', () => {
    const imu = makeImu(400, 200);
    for (let i = 0; i < 400; i++) imu.az[i] = 9.8;
    for (let i = 100; i < 140; i++) imu.gz[i] = 30; // deg/s logged against a rad/s range of 8.7
    imu.gz[200] = 8.7 * 1.005; // within a few codes of full scale: pinned
    expect(findSaturation(imu, 8.7, 78.4532).map((r) => [r.axis, r.samples])).toEqual([['gz', 1]]);
  });

  it('without a declared range, flags only exact repeats of the extreme value', () => {
    const imu = makeImu(400, 200);
    for (let i = 0; i < 400; i++) imu.ax[i] = Math.sin(i / 10);
    for (let i = 200; i < 205; i++) imu.ax[i] = 3.5;
    const runs = findSaturation(imu, null, null);
    expect(runs).toHaveLength(1);
    expect(runs[0]!.samples).toBe(5);
  });
});

describe('stationary intervals and units', () => {
  const g = geodesy.normalGravity((47.3821 * Math.PI) / 180, 412);
  function scene(accelUnit: number) {
    const rng = createRng(3);
    const imu = makeImu(6000, 200); // 30 s
    const odom = makeOdometry(600, 20);
    for (let i = 0; i < imu.n; i++) {
      const t = imu.t[i]!;
      const turning = t > 10 && t < 20;
      imu.gz[i] = (turning ? 0.5 : 0) + 0.003 * gaussian(rng);
      imu.gx[i] = 0.003 * gaussian(rng);
      imu.gy[i] = 0.003 * gaussian(rng);
      imu.ax[i] = (0.02 * gaussian(rng)) * accelUnit;
      imu.ay[i] = (0.02 * gaussian(rng)) * accelUnit;
      imu.az[i] = (g + 0.02 * gaussian(rng)) * accelUnit;
    }
    for (let k = 0; k < odom.n; k++) {
      const t = odom.t[k]!;
      const yaw = 0.5 * Math.min(Math.max(t - 10, 0), 10);
      odom.qw[k] = Math.cos(yaw / 2);
      odom.qz[k] = Math.sin(yaw / 2);
    }
    return { imu, odom };
  }

  it('finds the two rests around a turn in place and the gravity ratio ≈ 1 in m/s²', () => {
    const { imu, odom } = scene(1);
    const rest = findStationary(imu, odom, 0.0002, 0.0015);
    expect(rest).toHaveLength(2);
    expect(rest[0]!.tEnd).toBeGreaterThan(9);
    expect(rest[0]!.tEnd).toBeLessThanOrEqual(10.25);
    expect(rest[1]!.tStart).toBeGreaterThanOrEqual(19.75);
    const u = checkUnits(imu, odom, rest, g);
    expect(u.accelRestSource).toBe('stationary');
    expect(Math.abs(u.accelRestRatio! - 1)).toBeLessThan(0.002);
    expect(Math.abs(u.gyroOdometryRateRatio! - 1)).toBeLessThan(0.01);
  });

  it('gives 1/9.80665 when the accelerometer is written in g (ISO 80000-3 standard gravity; normal gravity NIMA TR8350.2)', () => {
    const { imu, odom } = scene(1 / 9.80665);
    const u = checkUnits(imu, odom, findStationary(imu, odom, 0.0002, 0.0015), g);
    // γ(47.38°, 412 m) / gn = 9.8077/9.80665 ≈ 1.0001, so the ratio is 0.10199 within the 0.002 noise allowance.
    expect(Math.abs(u.accelRestRatio! - 1 / 9.80665)).toBeLessThan(0.0005);
  });

  it('normal gravity at 45° is 9.80620 m/s² (Somigliana, WGS-84 constants of NIMA TR8350.2 — from memory)', () => {
    // γ(45°) = γe(1 + k sin²φ)/√(1 − e² sin²φ) with γe = 9.7803253359, k = 0.00193185265241, e² = 0.00669437999014.
    const s2 = 0.5;
    const expected = (9.7803253359 * (1 + 0.00193185265241 * s2)) / Math.sqrt(1 - 0.00669437999014 * s2);
    expect(geodesy.normalGravity(Math.PI / 4, 0)).toBeCloseTo(expected, 9);
    expect(expected).toBeCloseTo(9.80620, 4);
  });
});
