import { geodesy, quat, vec3 } from '@plumbline/geometry';
import { describe, expect, it } from 'vitest';
import { createKinState } from './motion/kinematics.ts';
import type { Scenario } from './scenario.ts';
import { simulateRun } from './simulate.ts';
import type { SimulatedRun } from './simulate.ts';
import { makeRunSpec } from './spec.ts';
import type { FaultSpec, RunSpec } from './spec.ts';
import { expectClose } from './test-helpers.ts';

const DEG = Math.PI / 180;

function run(faults: FaultSpec[], extra: Partial<RunSpec> = {}): SimulatedRun {
  return simulateRun(makeRunSpec({ noise: 'none', durationS: 60, imuRateHz: 100, odometryRateHz: 10, gnssRateHz: 0, loops: false, faults, ...extra }));
}

/** True pose (metres) of the odometry body in the odometry world at tRel, independent of the generator's loop. */
function trueOdom(s: Scenario, tRel: number) {
  const st = s.evaluate(tRel, createKinState());
  const p = quat.rotateVec3(vec3.create(), st.q, s.imuTOdomTrue.t);
  vec3.add(p, p, st.p);
  vec3.sub(p, p, s.enuTOdomWorld.t);
  const conj = quat.conjugate(quat.create(), s.enuTOdomWorld.q);
  quat.rotateVec3(p, conj, p);
  const q = quat.multiply(quat.create(), conj, quat.multiply(quat.create(), st.q, s.imuTOdomTrue.q));
  return { p, q };
}

/** Odometry position minus the true one (odometry units × scale → metres) at row i. */
function odomError(r: SimulatedRun, i: number): Float64Array {
  const t = trueOdom(r.scenario, r.odometry.tTrue[i]!);
  const sc = r.spec.scale;
  return vec3.create(r.odometry.x[i]! * sc - t.p[0]!, r.odometry.y[i]! * sc - t.p[1]!, r.odometry.z[i]! * sc - t.p[2]!);
}

describe('noise-free odometry', () => {
  it('equals the true odometry-body trajectory (0 drift without noise)', () => {
    const r = run([]);
    for (let i = 0; i < r.odometry.n; i += 37) expect(vec3.norm(odomError(r, i))).toBeLessThan(1e-9);
  });
});

describe('time-offset', () => {
  it('constant: every odometry stamp minus the true instant equals the offset', () => {
    const r = run([{ kind: 'time-offset', magnitude: 0.035 }]);
    for (let i = 0; i < r.odometry.n; i++) expectClose(r.odometry.t[i]! - (r.scenario.t0Epoch + r.odometry.tTrue[i]!), 0.035, 1e-6, 'offset');
    expect(r.truth.time_offset_s).toBe(0.035);
  });
  it('skew: offset grows at the stated ppm from its start', () => {
    const r = run([{ kind: 'time-offset', variant: 'skew', magnitude: 500, startS: 20 }]);
    const last = r.odometry.n - 1;
    const off = r.odometry.t[last]! - (r.scenario.t0Epoch + r.odometry.tTrue[last]!);
    expectClose(off, 500e-6 * (r.odometry.tTrue[last]! - 20), 1e-6, 'offset at end');
    const i10 = 100; // 10 s: before the skew starts
    expectClose(r.odometry.t[i10]! - (r.scenario.t0Epoch + r.odometry.tTrue[i10]!), 0, 1e-6, 'offset before start');
    expect(r.truth.faults[0]!.unit).toBe('ppm');
  });
});

describe('extrinsic-rotation', () => {
  it('declared rotation differs from the true one by the injected angle', () => {
    const r = run([{ kind: 'extrinsic-rotation', magnitude: 4, axis: [0, 0, 1] }]);
    const d = quat.multiply(quat.create(), quat.conjugate(quat.create(), r.scenario.imuTOdomTrue.q), Float64Array.from(r.manifest.extrinsics.imu_T_odom.rotation_wxyz));
    expectClose(quat.angle(d) / DEG, 4, 1e-6, 'angle'); // 1e-6°: the manifest rounds components to 1e-9
    expectClose(r.truth.extrinsic_rotation_error_deg, 4, 1e-6, 'truth angle');
  });
});

describe('gravity-tilt', () => {
  it('gravity seen by the accelerometer at rest, mapped into the odometry world, is tilted by the injected angle', () => {
    const r = run([{ kind: 'gravity-tilt', magnitude: 3 }]);
    expect(r.manifest.odometry.world_gravity_aligned).toBe(true);
    // At rest f_b = −g in the IMU frame; odometry world ← odometry body ← IMU via the reported pose and true extrinsic.
    const f = vec3.create(r.imu.ax[10]!, r.imu.ay[10]!, r.imu.az[10]!);
    const qOdom = quat.set(quat.create(), r.odometry.qw[1]!, r.odometry.qx[1]!, r.odometry.qy[1]!, r.odometry.qz[1]!);
    const qImuInWorld = quat.multiply(quat.create(), qOdom, quat.conjugate(quat.create(), r.scenario.imuTOdomTrue.q));
    const up = quat.rotateVec3(vec3.create(), qImuInWorld, f);
    expectClose(vec3.angle(up, vec3.create(0, 0, 1)) / DEG, 3, 1e-9, 'tilt from data');
    expectClose(r.truth.gravity_tilt_deg, 3, 1e-6, 'truth tilt');
  });
});

describe('scale-drift', () => {
  it('step: odometry step lengths over true step lengths change by the injected ratio', () => {
    const r = run([{ kind: 'scale-drift', variant: 'step', magnitude: 10, startS: 30 }], { scale: 2, monocular: true, durationS: 120 });
    const ratio = (i: number) => {
      const a = trueOdom(r.scenario, r.odometry.tTrue[i - 1]!).p, b = trueOdom(r.scenario, r.odometry.tTrue[i]!).p;
      const dOdom = Math.hypot(r.odometry.x[i]! - r.odometry.x[i - 1]!, r.odometry.y[i]! - r.odometry.y[i - 1]!, r.odometry.z[i]! - r.odometry.z[i - 1]!);
      const dTrue = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!, b[2]! - a[2]!);
      return dTrue > 0.05 ? dTrue / dOdom : Number.NaN;
    };
    const before = [...Array(290).keys()].map((k) => ratio(k + 5)).filter(Number.isFinite);
    const after = [...Array(500).keys()].map((k) => ratio(k + 310)).filter(Number.isFinite);
    expect(before.length).toBeGreaterThan(20);
    expect(after.length).toBeGreaterThan(20);
    for (const x of before) expectClose(x, 2, 1e-9, 'scale before');
    for (const x of after) expectClose(x, 2.2, 1e-9, 'scale after');
  });
  it('linear: scale grows by the injected percentage per 100 m of true distance', () => {
    const r = run([{ kind: 'scale-drift', variant: 'linear', magnitude: 5, startS: 10 }], { durationS: 120 });
    let dist = 0;
    let checked = 0;
    for (let i = 1; i < r.odometry.n; i++) {
      const a = trueOdom(r.scenario, r.odometry.tTrue[i - 1]!).p, b = trueOdom(r.scenario, r.odometry.tTrue[i]!).p;
      const dTrue = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!, b[2]! - a[2]!);
      if (r.odometry.tTrue[i]! >= 10) dist += dTrue;
      if (r.odometry.tTrue[i]! < 10 || dTrue < 0.05) continue;
      const dOdom = Math.hypot(r.odometry.x[i]! - r.odometry.x[i - 1]!, r.odometry.y[i]! - r.odometry.y[i - 1]!, r.odometry.z[i]! - r.odometry.z[i - 1]!);
      expectClose(dTrue / dOdom, 1 + 0.05 * (dist / 100), 1e-9, 'scale');
      checked++;
    }
    expect(checked).toBeGreaterThan(100);
  });
});

describe('gaps', () => {
  it('imu-gap: no IMU sample inside the interval, and exactly the recorded number removed', () => {
    const r = run([{ kind: 'imu-gap', magnitude: 0, startS: 20, endS: 22.5 }]);
    const t0 = r.scenario.t0Epoch;
    let inside = 0;
    for (let i = 0; i < r.imu.n; i++) if (r.imu.t[i]! - t0 >= 20 && r.imu.t[i]! - t0 < 22.5) inside++;
    expect(inside).toBe(0);
    expect(r.truth.faults[0]!.params.samples_removed).toBe(250);
    expect(r.imu.n).toBe(6001 - 250);
  });
  it('odometry-gap: no pose inside the interval', () => {
    const r = run([{ kind: 'odometry-gap', magnitude: 0, startS: 30, endS: 33 }]);
    for (let i = 0; i < r.odometry.n; i++) expect(r.odometry.tTrue[i]! >= 30 && r.odometry.tTrue[i]! < 33).toBe(false);
    expect(r.odometry.n).toBe(601 - 30);
  });
});

describe('imu-saturation', () => {
  it('accel impact: samples clamp exactly at the range inside the interval only', () => {
    const r = run([{ kind: 'imu-saturation', variant: 'accel', magnitude: 0, startS: 30, endS: 30.6 }], { noise: 'realistic' });
    const range = r.spec.imu.accelRange;
    let clamped = 0;
    for (let i = 0; i < r.imu.n; i++) {
      const tr = r.imu.t[i]! - r.scenario.t0Epoch;
      const atRange = Math.abs(r.imu.az[i]!) === range;
      if (atRange) clamped++;
      if (atRange) expect(tr > 30 && tr < 30.6).toBe(true);
      expect(Math.abs(r.imu.az[i]!)).toBeLessThanOrEqual(range);
    }
    expect(clamped).toBeGreaterThan(5);
  });
  it('gyro impact: roll rate clamps at the gyro range', () => {
    const r = run([{ kind: 'imu-saturation', variant: 'gyro', magnitude: 12, startS: 20, endS: 20.5 }]);
    const range = r.spec.imu.gyroRange;
    let clamped = 0;
    for (let i = 0; i < r.imu.n; i++) if (Math.abs(r.imu.gx[i]!) === range) clamped++;
    expect(clamped).toBeGreaterThan(3);
  });
});

describe('pose-jump', () => {
  it('odometry jumps by the injected metres in the recorded direction and stays there', () => {
    const r = run([{ kind: 'pose-jump', magnitude: 0.6, startS: 25 }]);
    const dir = r.truth.faults[0]!.params.direction_in_odom_world as number[];
    for (let i = 0; i < r.odometry.n; i += 7) {
      const e = odomError(r, i);
      const expected = r.odometry.tTrue[i]! >= 25 ? 0.6 : 0;
      for (let k = 0; k < 3; k++) expectClose(e[k]!, expected * dir[k]!, 1e-6, `jump[${k}] at ${r.odometry.tTrue[i]}`);
    }
  });
});

describe('units', () => {
  it('gyro written in deg/s and accel in g scale the samples by exactly 180/π and 1/9.80665', () => {
    const clean = run([]);
    const deg = run([{ kind: 'units', variant: 'gyro-deg', magnitude: 0 }]);
    const g = run([{ kind: 'units', variant: 'accel-g', magnitude: 0 }]);
    for (const i of [1000, 2500, 4000]) {
      expectClose(deg.imu.gz[i]!, (clean.imu.gz[i]! * 180) / Math.PI, 1e-12, 'deg/s');
      expectClose(g.imu.az[i]!, clean.imu.az[i]! / 9.80665, 1e-12, 'g'); // standard gravity, 3rd CGPM (1901)
    }
  });
});

describe('loop-mismatch', () => {
  it('adds one confident loop between places at least the requested distance apart; genuine loops are within 1 m', () => {
    const r = run([{ kind: 'loop-mismatch', magnitude: 8, startS: 40 }], { durationS: 240, loops: true });
    const loops = r.loops!;
    const f = r.truth.faults[0]!;
    expect(f.magnitude).toBeGreaterThanOrEqual(8);
    let falseRows = 0;
    for (let i = 0; i < loops.n; i++) {
      const a = trueOdom(r.scenario, loops.tA[i]! - r.scenario.t0Epoch).p;
      const b = trueOdom(r.scenario, loops.tB[i]! - r.scenario.t0Epoch).p;
      const d = Math.hypot(b[0]! - a[0]!, b[1]! - a[1]!, b[2]! - a[2]!);
      if (loops.genuine[i]) expect(d).toBeLessThan(1);
      else {
        falseRows++;
        expectClose(loops.tA[i]!, f.t_start, 1e-6, 't_a');
        expectClose(d, f.magnitude, 1e-6, 'separation');
      }
    }
    expect(falseRows).toBe(1);
    expect(loops.n).toBeGreaterThan(1);
  });
});

describe('gnss-divergence', () => {
  it('fixes are offset by the injected metres inside the interval and exact outside', () => {
    const r = run([{ kind: 'gnss-divergence', magnitude: 4, startS: 60, endS: 90 }], { site: 'northgate-yard', gnssRateHz: 5, durationS: 150 });
    const gn = r.gnss!;
    const origin = geodesy.createEnuOrigin(r.truth.site_origin.lat_deg, r.truth.site_origin.lon_deg, r.truth.site_origin.h_m);
    const e = new Float64Array(gn.n), n = new Float64Array(gn.n), u = new Float64Array(gn.n);
    geodesy.geodeticToEnu(e, n, u, gn.lat.subarray(0, gn.n), gn.lon.subarray(0, gn.n), gn.alt.subarray(0, gn.n), origin);
    const dir = r.truth.faults[0]!.params.direction_enu as number[];
    let inside = 0;
    for (let i = 0; i < gn.n; i++) {
      const tr = gn.t[i]! - r.scenario.t0Epoch;
      const st = r.scenario.evaluate(tr, createKinState());
      const ant = quat.rotateVec3(vec3.create(), st.q, r.scenario.antennaInImu);
      vec3.add(ant, ant, st.p);
      const off = tr >= 60 && tr < 90 ? 4 : 0;
      if (off) inside++;
      // 1e-6 m: ENU → geodetic → ENU round trip through WGS-84 is exact to well below a micrometre.
      expectClose(e[i]! - ant[0]!, off * dir[0]!, 1e-6, `east at ${tr}`);
      expectClose(n[i]! - ant[1]!, off * dir[1]!, 1e-6, `north at ${tr}`);
      expectClose(u[i]! - ant[2]!, 0, 1e-6, `up at ${tr}`);
    }
    expect(inside).toBe(150);
  });
});
