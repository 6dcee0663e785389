import { describe, expect, it } from 'vitest';
import { quat as glq } from 'gl-matrix';
import { quat } from '@plumbline/geometry';
import { estimateTimeOffset } from './time-offset.ts';
import { estimateRotation, handEyeRotation } from './rotation.ts';
import { preintegrateBatch } from './preintegration-batch.ts';
import { selectKeyframes } from './keyframes.ts';
import { createRng, makeImu, makeOdometry } from './test-signals.ts';

const DEG = Math.PI / 180;

/** Body attitude R_WB(t) = Rz(ψ)·Rx(φ)·Ry(θ) with smooth angles; body rate in closed form. */
function attitude(t: number, out: Float64Array): Float64Array {
  const psi = 0.8 * Math.sin(0.7 * t) + 0.3 * t, phi = 0.3 * Math.sin(1.3 * t), th = 0.25 * Math.cos(0.9 * t);
  const qz = quat.fromRotationVector(quat.create(), 0, 0, psi);
  const qx = quat.fromRotationVector(quat.create(), phi, 0, 0);
  const qy = quat.fromRotationVector(quat.create(), 0, th, 0);
  return quat.multiply(out, quat.multiply(out, qz, qx), qy);
}

function bodyRate(t: number, out: Float64Array): Float64Array {
  // Numerical derivative of the attitude (central difference, h = 1e-5 s): ω_B = 2·Im(q* ⊗ q̇).
  const a = attitude(t - 1e-5, quat.create()), b = attitude(t + 1e-5, quat.create());
  const d = quat.multiply(quat.create(), quat.conjugate(quat.create(), a), b);
  quat.toRotationVector(out, d);
  for (let i = 0; i < 3; i++) out[i] = out[i]! / 2e-5;
  return out;
}

/** IMU of a rig whose odometry body is rotated by X = R_IB, with gyro bias b; odometry stamped offsetS late. */
function rig(X: Float64Array, bias: number[], offsetS: number, seconds: number) {
  const imu = makeImu(seconds * 200 + 1, 200);
  const w = new Float64Array(3);
  for (let i = 0; i < imu.n; i++) {
    bodyRate(imu.t[i]!, w);
    quat.rotateVec3(w, X, w);
    imu.gx[i] = w[0]! + bias[0]!;
    imu.gy[i] = w[1]! + bias[1]!;
    imu.gz[i] = w[2]! + bias[2]!;
    imu.az[i] = 9.81;
  }
  const odom = makeOdometry(seconds * 20 - 20, 20, 0.5);
  const q = quat.create();
  for (let k = 0; k < odom.n; k++) {
    attitude(odom.t[k]!, q);
    odom.t[k] = odom.t[k]! + offsetS; // the odometry clock runs offsetS ahead of the IMU clock
    [odom.qw[k], odom.qx[k], odom.qy[k], odom.qz[k]] = [q[0]!, q[1]!, q[2]!, q[3]!];
  }
  return { imu, odom };
}

describe('hand–eye rotation, closed form', () => {
  it('recovers X from C_k = X A_k Xᵀ built with gl-matrix (reference library, Hamilton convention)', () => {
    const rng = createRng(5);
    const X = quat.normalize(quat.create(), Float64Array.of(0.9, 0.2, -0.3, 0.25));
    const n = 20;
    const a = new Float64Array(4 * n), c = new Float64Array(4 * n);
    // gl-matrix stores [x, y, z, w]; ours is [w, x, y, z].
    const gx = glq.fromValues(X[1]!, X[2]!, X[3]!, X[0]!), gxi = glq.invert(glq.create(), gx);
    for (let k = 0; k < n; k++) {
      const ax = 2 * rng() - 1, ay = 2 * rng() - 1, az = 2 * rng() - 1;
      const ga = glq.setAxisAngle(glq.create(), [ax, ay, az].map((v) => v / Math.hypot(ax, ay, az)) as [number, number, number], 0.5 * rng() + 0.1);
      const gc = glq.multiply(glq.create(), glq.multiply(glq.create(), gx, ga), gxi);
      a.set([ga[3], ga[0], ga[1], ga[2]], 4 * k);
      c.set([gc[3], gc[0], gc[1], gc[2]], 4 * k);
    }
    const est = handEyeRotation(c, a, n)!;
    expect(quat.angleBetween(est, X)).toBeLessThan(1e-6);
  });

  it('refuses rotations about a single axis (unobservable about that axis)', () => {
    const n = 10, a = new Float64Array(4 * n), c = new Float64Array(4 * n);
    for (let k = 0; k < n; k++) {
      quat.fromRotationVector(a.subarray(4 * k, 4 * k + 4), 0, 0, 0.1 * (k + 1));
      quat.fromRotationVector(c.subarray(4 * k, 4 * k + 4), 0, 0, 0.1 * (k + 1));
    }
    expect(handEyeRotation(c, a, n)).toBeNull();
  });
});

describe('time offset and rotation on a noise-free rig', () => {
  const X = quat.fromRotationVector(quat.create(), 3 * DEG, -2 * DEG, 1.5 * DEG);
  const bias = [0.004, -0.003, 0.002];
  const { imu, odom } = rig(X, bias, 0.0237, 60);

  it('recovers the offset (odometry − IMU stamp) within 0.2 ms', () => {
    const r = estimateTimeOffset(imu, odom, { windowS: 20, gyroBiasRadS: bias });
    if (!r.ok) throw new Error(r.reason);
    // Noise-free: what remains is the 5 ms sampling of a smooth signal; 0.2 ms is common practice for this check.
    expect(Math.abs(r.offsetS - 0.0237)).toBeLessThan(2e-4);
    expect(r.skewPpm === null || Math.abs(r.skewPpm) < 20).toBe(true);
  });

  it('recovers X within 0.01° and the gyro bias within 1e-4 rad/s', () => {
    const kf = selectKeyframes(odom, 0.25, { offsetS: 0.0237, skew: 0, tRef: 0 });
    const zero = new Float64Array(3);
    const batch = preintegrateBatch(imu, kf.tImu, zero, zero);
    const prior = quat.create(); // manifest says identity: a 3.9° error
    const r = estimateRotation(batch, kf, prior, { spanS: 0.5 });
    if (!r.ok) throw new Error(r.reason);
    expect(quat.angleBetween(r.imuQOdom, X) / DEG).toBeLessThan(0.01);
    for (let k = 0; k < 3; k++) expect(Math.abs(r.gyroBiasRadS[k]! - bias[k]!)).toBeLessThan(1e-4);
  });
});
