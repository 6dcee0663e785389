import { geodesy, quat, vec3 } from '@plumbline/geometry';
import { describe, expect, it } from 'vitest';
import { createKinState } from './motion/kinematics.ts';
import { simulateRun } from './simulate.ts';
import { makeRunSpec } from './spec.ts';

describe('realistic odometry drift', () => {
  it('largest position error stays within 0.05–3 % of the path (VO/VIO on good data: common practice)', () => {
    for (const seed of [1, 3]) {
      const r = simulateRun(makeRunSpec({ seed, durationS: 240, imuRateHz: 100, gnssRateHz: 0, loops: false }));
      const s = r.scenario, o = r.odometry;
      const conj = quat.conjugate(quat.create(), s.enuTOdomWorld.q);
      const st = createKinState(), p = vec3.create();
      let worst = 0;
      for (let k = 0; k < o.n; k += 5) {
        s.evaluate(o.tTrue[k]!, st);
        quat.rotateVec3(p, st.q, s.imuTOdomTrue.t);
        vec3.add(p, p, st.p);
        vec3.sub(p, p, s.enuTOdomWorld.t);
        quat.rotateVec3(p, conj, p);
        worst = Math.max(worst, Math.hypot(o.x[k]! - p[0]!, o.y[k]! - p[1]!, o.z[k]! - p[2]!));
      }
      const pct = (100 * worst) / r.truth.path_length_m;
      expect(pct).toBeGreaterThan(0.05);
      expect(pct).toBeLessThan(3);
    }
  });
});

describe('IMU noise at rest', () => {
  it('white-noise standard deviation equals density × √rate within 10 % (IEEE Std 952-1997 model, from memory)', () => {
    const r = simulateRun(makeRunSpec({ seed: 5, durationS: 30, imuRateHz: 200, gnssRateHz: 0, loops: false }));
    // First 6 s are stationary (1 200 samples): sample σ has a relative standard error of about 1/√(2·1200) ≈ 2 %.
    const n = 1200;
    const sd = (a: Float64Array) => {
      let m = 0;
      for (let i = 0; i < n; i++) m += a[i]!;
      m /= n;
      let v = 0;
      for (let i = 0; i < n; i++) v += (a[i]! - m) ** 2;
      return Math.sqrt(v / (n - 1));
    };
    const g = r.spec.imu.gyroNoiseDensity * Math.sqrt(200), a = r.spec.imu.accelNoiseDensity * Math.sqrt(200);
    for (const col of [r.imu.gx, r.imu.gy, r.imu.gz]) expect(Math.abs(sd(col) / g - 1)).toBeLessThan(0.1);
    for (const col of [r.imu.ax, r.imu.ay, r.imu.az]) expect(Math.abs(sd(col) / a - 1)).toBeLessThan(0.1);
    // Turn-on biases are drawn within their stated bounds.
    for (const b of r.truth.imu.gyro_turn_on_bias_rad_s as number[]) expect(Math.abs(b)).toBeLessThanOrEqual(r.spec.imu.gyroTurnOnBias);
  });
});

describe('GNSS', () => {
  it('indoor aisles give no fixes; outdoors RTK-fixed epochs sit within 10 cm of the antenna truth', () => {
    const r = simulateRun(makeRunSpec({ seed: 2, durationS: 300, imuRateHz: 100, loops: false }));
    const gn = r.gnss!;
    let fixed = 0, none = 0;
    for (let i = 0; i < gn.n; i++) {
      if (gn.fix[i] === 0) none++;
      if (gn.fix[i] === 4) fixed++;
    }
    const o = r.truth.site_origin;
    const origin = geodesy.createEnuOrigin(o.lat_deg, o.lon_deg, o.h_m);
    const e = new Float64Array(gn.n), nn = new Float64Array(gn.n), u = new Float64Array(gn.n);
    geodesy.geodeticToEnu(e, nn, u, gn.lat.subarray(0, gn.n), gn.lon.subarray(0, gn.n), gn.alt.subarray(0, gn.n), origin);
    const st = createKinState(), ant = vec3.create();
    for (let i = 0; i < gn.n; i++) {
      if (gn.fix[i] !== 4) continue;
      r.scenario.evaluate(gn.t[i]! - r.scenario.t0Epoch, st);
      quat.rotateVec3(ant, st.q, r.scenario.antennaInImu);
      vec3.add(ant, ant, st.p);
      // 10 cm ≈ 6σ of the 1.5 cm horizontal RTK noise (vertical 1.5× that).
      expect(Math.hypot(e[i]! - ant[0]!, nn[i]! - ant[1]!, u[i]! - ant[2]!)).toBeLessThan(0.1);
    }
    expect(none).toBeGreaterThan(100);
    expect(fixed).toBeGreaterThan(50);
    expect(r.truth.gnss).not.toBeNull();
  });
});
