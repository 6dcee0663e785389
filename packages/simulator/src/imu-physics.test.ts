import { quat, so3, vec3 } from '@plumbline/geometry';
import { describe, expect, it } from 'vitest';
import { createKinState } from './motion/kinematics.ts';
import type { EulerKinematics, MotionModel } from './motion/kinematics.ts';
import { createScenario } from './scenario.ts';
import { createImuBlock, createImuGenerator } from './sensors/imu.ts';
import { makeRunSpec, SITES } from './spec.ts';
import type { RunSpec } from './spec.ts';
import { expectClose, integrateRk4 } from './test-helpers.ts';

const DEG = Math.PI / 180;

function noiseFreeImu(spec: RunSpec, motion?: MotionModel) {
  const s = createScenario(spec, motion);
  const g = createImuGenerator(s);
  const b = createImuBlock(g.count);
  g.fill(0, g.count, b);
  return { s, b };
}

describe('specific force at rest', () => {
  it('equals WGS-84 normal gravity at the site latitude and height', () => {
    for (const site of ['harbourside-depot', 'northgate-yard'] as const) {
      const { s, b } = noiseFreeImu(makeRunSpec({ site, noise: 'none', durationS: 20, imuRateHz: 100, faults: [] }));
      // Reference: NIMA TR8350.2 (WGS 84), Somigliana γ(φ) = γe(1 + k sin²φ)/√(1 − e² sin²φ) with γe = 9.7803253359,
      // k = 0.00193185265241, e² = 0.00669437999014, and the free-air series γh = γ[1 − 2/a(1 + f + m − 2f sin²φ)h + 3h²/a²]
      // (TR8350.2 eq. 4-1 and 4-3, from memory), m = ω²a²b/GM.
      const { latDeg, hM } = SITES[site];
      const s2 = Math.sin(latDeg * DEG) ** 2;
      const a = 6378137, f = 1 / 298.257223563, b2 = a * (1 - f), m = (7.292115e-5 ** 2 * a * a * b2) / 3.986004418e14;
      const g0 = (9.7803253359 * (1 + 0.00193185265241 * s2)) / Math.sqrt(1 - 0.00669437999014 * s2);
      const gRef = g0 * (1 - (2 / a) * (1 + f + m - 2 * f * s2) * hM + (3 / (a * a)) * hM * hM);
      expect(Math.abs(s.gravity - gRef) / gRef).toBeLessThan(1e-9);
      for (const k of [0, 50, 300]) {
        const norm = Math.hypot(b.ax[k]!, b.ay[k]!, b.az[k]!);
        expect(Math.abs(norm - gRef) / gRef).toBeLessThan(1e-9);
        expect(Math.hypot(b.gx[k]!, b.gy[k]!, b.gz[k]!)).toBeLessThan(1e-15);
      }
    }
  });
});

/** Integrates the noise-free IMU with RK4 over [t0, t0 + 60 s] and returns the largest position error, m. */
function integrationError(spec: RunSpec, t0: number): number {
  const { s, b } = noiseFreeImu(spec);
  const rate = spec.imuRateHz;
  const st = createKinState();
  const k0 = 2 * Math.round((t0 * rate) / 2);
  s.evaluate(k0 / rate, st);
  let worst = 0;
  const truth = createKinState();
  integrateRk4([b.gx, b.gy, b.gz], [b.ax, b.ay, b.az], 1 / rate, k0, (60 * rate) / 2, s.gravity, { q: st.q, v: st.v, p: st.p }, (k, nav) => {
    s.evaluate(k / rate, truth);
    worst = Math.max(worst, Math.hypot(nav.p[0]! - truth.p[0]!, nav.p[1]! - truth.p[1]!, nav.p[2]! - truth.p[2]!));
  });
  return worst;
}

describe('noise-free IMU reproduces the trajectory', () => {
  // Tolerance 1 mm over 60 s: any inconsistency between the analytic motion and the synthesised IMU (a wrong sign,
  // frame or derivative) grows quadratically and exceeds it by orders of magnitude; RK4 at 1 kHz contributes ~µm.
  it('ground robot through the ramp and yard loop', () => {
    const spec = makeRunSpec({ noise: 'none', durationS: 300, imuRateHz: 1000, gnssRateHz: 0, loops: false });
    const t0 = createScenario(spec).motion.outdoorIntervals[0]![0] - 5;
    expect(integrationError(spec, t0)).toBeLessThan(1e-3);
  });
  it('handheld motion in all six degrees of freedom', () => {
    const spec = makeRunSpec({ motion: 'handheld', noise: 'none', durationS: 80, imuRateHz: 1000, gnssRateHz: 0, loops: false });
    expect(integrationError(spec, 10)).toBeLessThan(1e-3);
  });
});

/** Closed-form motions built directly as motion models. */
function constantMotion(rate: readonly [number, number, number], accel: readonly [number, number, number]): MotionModel {
  return {
    durationS: 10,
    pathLengthM: 0,
    outdoorIntervals: [],
    evaluateEuler(t: number, out: EulerKinematics) {
      for (let i = 0; i < 3; i++) {
        out.p[i] = 0.5 * accel[i]! * t * t;
        out.v[i] = accel[i]! * t;
        out.a[i] = accel[i]!;
        out.euler[i] = rate[i]! * t;
        out.eulerRate[i] = rate[i]!;
      }
      return out;
    },
  };
}

describe('closed forms (Forster et al., IEEE T-RO 33(1), 2017, preintegration of constant rate and acceleration)', () => {
  const spec = makeRunSpec({ noise: 'none', durationS: 10, imuRateHz: 200 });
  it('constant angular rate about z: ΔR = Exp(ωT)', () => {
    const w = 0.7;
    const { s, b } = noiseFreeImu(spec, constantMotion([0, 0, w], [0, 0, 0]));
    const T = 3;
    const k = T * spec.imuRateHz;
    // Measured rate is exactly ω in the body; the attitude change over T is Exp(ωT).
    expectClose(b.gz[k]!, w, 1e-12, 'gyro z');
    const st0 = s.evaluate(0, createKinState());
    const st1 = s.evaluate(T, createKinState());
    const dR = quat.multiply(quat.create(), quat.conjugate(quat.create(), st0.q), st1.q);
    const rv = quat.toRotationVector(vec3.create(), dR);
    expectClose(rv[2]!, w * T - 2 * Math.PI * Math.round((w * T) / (2 * Math.PI)), 1e-12, 'log ΔR z');
    const R = so3.exp(new Float64Array(9), vec3.create(0, 0, w * T));
    const Rq = quat.toMat3(new Float64Array(9), dR);
    for (let i = 0; i < 9; i++) expectClose(Rq[i]!, R[i]!, 1e-12, `ΔR[${i}]`);
  });
  it('constant angular rate about x with gravity seen rotating in the body', () => {
    const w = 0.4;
    const { s, b } = noiseFreeImu(spec, constantMotion([w, 0, 0], [0, 0, 0]));
    const k = 2.5 * spec.imuRateHz;
    expectClose(b.gx[k]!, w, 1e-12, 'gyro x');
    // f_b = Rᵀ(0, 0, γ) = γ(0, sin ωt, cos ωt) for R = Rx(ωt).
    expectClose(b.ay[k]!, s.gravity * Math.sin(w * 2.5), 1e-12, 'f_y');
    expectClose(b.az[k]!, s.gravity * Math.cos(w * 2.5), 1e-12, 'f_z');
  });
  it('constant acceleration without rotation: Δp = ½aT², f = a − g', () => {
    const a = [0.3, -0.2, 0.1] as const;
    const { s, b } = noiseFreeImu(spec, constantMotion([0, 0, 0], a));
    const T = 4;
    const k = T * spec.imuRateHz;
    expectClose(b.ax[k]!, a[0], 1e-12, 'f_x');
    expectClose(b.az[k]!, a[2] + s.gravity, 1e-12, 'f_z');
    const nav = integrateRk4([b.gx, b.gy, b.gz], [b.ax, b.ay, b.az], 1 / spec.imuRateHz, 0, k / 2, s.gravity, {
      q: quat.create(), v: vec3.create(), p: vec3.create(),
    });
    for (let i = 0; i < 3; i++) expectClose(nav.p[i]!, 0.5 * a[i]! * T * T, 1e-9, `Δp[${i}]`);
  });
});
