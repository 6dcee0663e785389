import { describe, expect, it } from 'vitest';
import { quat } from '@plumbline/geometry';
import { correct, preintegrate, type Preintegrated } from './preintegration.ts';
import { correctBatchAt, preintegrateBatch } from './preintegration-batch.ts';
import { expectNear, makeImu } from './test-signals.ts';

const zero = new Float64Array(3);
const noise = { gyroNoiseDensity: 1e-3, accelNoiseDensity: 1e-2 };

function ok(r: ReturnType<typeof preintegrate>): Preintegrated {
  if (!r.ok) throw new Error(r.reason);
  return r;
}

describe('preintegration, constant angular rate', () => {
  it('gives ΔR = Exp(ωT) (Forster et al. 2017, closed form for constant rate)', () => {
    const imu = makeImu(401, 200);
    imu.gx.fill(0.3);
    imu.gy.fill(-0.2);
    imu.gz.fill(0.5);
    // Keyframes between samples (0.0123 s and 1.7777 s) exercise the interpolated boundaries.
    const ta = 0.0123, tb = 1.7777, T = tb - ta;
    const pre = ok(preintegrate(imu, ta, tb, zero, zero, noise));
    const expected = quat.toMat3(new Float64Array(9), quat.fromRotationVector(quat.create(), 0.3 * T, -0.2 * T, 0.5 * T));
    // Exact up to rounding: each step multiplies by the exact Exp of a constant rate.
    expectNear(pre.dR, expected, 1e-12, 'ΔR');
    expectNear(pre.dt, T, 1e-12, 'Δt');
    // Isotropic gyro noise: rotation block of the covariance is σg² T I (Forster Appendix A, Jr ≈ I to O(ωh)).
    expectNear(pre.cov[0]!, 1e-6 * T, 1e-6 * T * 1e-3, 'Σφφ');
  });
});

describe('preintegration, constant acceleration without rotation', () => {
  it('gives Δv = aT and Δp = ½aT² (Forster et al. 2017)', () => {
    const imu = makeImu(1001, 200);
    imu.ax.fill(0.7);
    imu.ay.fill(-1.1);
    imu.az.fill(9.81);
    const T = 3.2;
    const pre = ok(preintegrate(imu, 0.5, 0.5 + T, zero, zero, noise));
    expectNear(pre.dv, [0.7 * T, -1.1 * T, 9.81 * T], 1e-10, 'Δv');
    expectNear(pre.dp, [0.35 * T * T, -0.55 * T * T, 0.5 * 9.81 * T * T], 1e-9, 'Δp');
    // Accel white noise through a double integrator: Σvv = σa² T, Σpp = σa² T³/3; gyro noise tilts the specific
    // force and adds σg² |a⊥|² T³/3 to Σvv (Forster Appendix A, integrated in closed form; discretisation O(h/T)).
    const sg2 = 1e-6, sa2 = 1e-4;
    expectNear(pre.cov[30]!, sa2 * T + (sg2 * (1.1 ** 2 + 9.81 ** 2) * T ** 3) / 3, 1.5e-5, 'Σvv x');
    expectNear(pre.cov[40]!, sa2 * T + (sg2 * (0.7 ** 2 + 9.81 ** 2) * T ** 3) / 3, 1.5e-5, 'Σvv y');
    const accelOnly = ok(preintegrate(imu, 0.5, 0.5 + T, zero, zero, { gyroNoiseDensity: 0, accelNoiseDensity: 1e-2 }));
    expectNear(accelOnly.cov[30]!, sa2 * T, 1e-12, 'Σvv accel only');
    expectNear(accelOnly.cov[60]!, (sa2 * T ** 3) / 3, 1e-4 * T ** 3 * 1e-3, 'Σpp accel only');
  });
});

describe('preintegration bias Jacobians', () => {
  it('first-order correction matches re-integration with the new bias', () => {
    const imu = makeImu(801, 200);
    for (let i = 0; i < imu.n; i++) {
      const t = imu.t[i]!;
      imu.gx[i] = 0.4 * Math.sin(1.3 * t);
      imu.gy[i] = 0.2 * Math.cos(0.7 * t);
      imu.gz[i] = 0.6 + 0.3 * Math.sin(2.1 * t);
      imu.ax[i] = 1.2 * Math.cos(1.7 * t);
      imu.ay[i] = 0.8 * Math.sin(0.9 * t);
      imu.az[i] = 9.8 + 0.4 * Math.sin(3 * t);
    }
    const dbg = Float64Array.of(0.004, -0.003, 0.005);
    const dba = Float64Array.of(0.05, -0.04, 0.03);
    const pre = ok(preintegrate(imu, 0.1, 1.1, zero, zero, noise));
    const fresh = ok(preintegrate(imu, 0.1, 1.1, dbg, dba, noise));
    const c = correct(pre, dbg, dba);
    // Second-order remainder: |δb|²·T² ≈ 1e-5 scale (common practice for first-order checks).
    expectNear(c.dR, fresh.dR, 2e-5, 'ΔR corrected');
    expectNear(c.dv, fresh.dv, 2e-4, 'Δv corrected');
    expectNear(c.dp, fresh.dp, 1e-4, 'Δp corrected');
    // The correction must matter, or this test could not fail.
    expect(Math.abs(pre.dv[0]! - fresh.dv[0]!)).toBeGreaterThan(1e-2);
  });
});

describe('batch preintegration', () => {
  it('matches the single-interval function on every keyframe interval and marks gaps', () => {
    const imu = makeImu(2001, 200);
    for (let i = 0; i < imu.n; i++) {
      const t = imu.t[i]!;
      imu.gz[i] = 0.5 * Math.sin(t);
      imu.gx[i] = 0.1;
      imu.ax[i] = Math.cos(2 * t);
      imu.az[i] = 9.8;
    }
    // A 0.1 s hole around t = 6 s.
    for (let i = 1200; i < imu.n; i++) imu.t[i] = imu.t[i]! + 0.1;
    const keys = Float64Array.from({ length: 41 }, (_, k) => 0.013 + k * 0.2477);
    const b = preintegrateBatch(imu, keys, zero, zero, noise);
    const dq = new Float64Array(4), dv = new Float64Array(3), dp = new Float64Array(3), s = new Float64Array(4);
    let broken = 0;
    for (let k = 0; k < b.n; k++) {
      const single = preintegrate(imu, keys[k]!, keys[k + 1]!, zero, zero, noise);
      expect(b.valid[k] === 1).toBe(single.ok);
      if (!single.ok) {
        broken++;
        continue;
      }
      correctBatchAt(b, k, zero, zero, dq, dv, dp, s);
      const q = quat.fromMat3(quat.create(), single.dR);
      // angleBetween goes through acos, whose resolution near 0 is ~3e-8 rad.
      expect(quat.angleBetween(q, dq)).toBeLessThan(1e-7);
      expectNear(dv, single.dv, 1e-12, `Δv[${k}]`);
      expectNear(dp, single.dp, 1e-12, `Δp[${k}]`);
    }
    expect(broken).toBe(1);
  });
});
