/**
 * IMU samples from the true motion: gyro ω_b and specific force f_b = R_wbᵀ(a_w − g_w) with g_w = (0, 0, −γ),
 * γ the WGS-84 normal gravity at the site. Errors (IEEE Std 952-1997 error model, common practice): constant
 * turn-on bias, bias random walk, white noise with σ = N·√rate, quantisation to `bits` over ±range and a clamp at
 * the range. Faults: gaps (samples dropped), saturating impacts (in the motion), unit mistakes.
 */
import type { ImuColumns } from '@plumbline/bundle';
import { quat, vec3 } from '@plumbline/geometry';
import { createKinState } from '../motion/kinematics.ts';
import { createRng } from '../prng.ts';
import type { Scenario } from '../scenario.ts';

/** Growable columns for imu.csv (the reader's column layout). */
export type ImuBlock = ImuColumns;

export function createImuBlock(capacity: number): ImuBlock {
  const c = () => new Float64Array(capacity);
  return { n: 0, t: c(), gx: c(), gy: c(), gz: c(), ax: c(), ay: c(), az: c() };
}

export interface ImuGenerator {
  /** total number of sample instants (before gaps) */
  readonly count: number;
  /**
   * Generates instants [k0, k0 + count) into out (from index 0), dropping samples inside gaps; returns out.n.
   * Calls must be sequential (k0 continues where the last call ended) because biases random-walk.
   */
  fill(k0: number, count: number, out: ImuBlock): number;
}

function quantiser(range: number, bits: number) {
  const lsb = bits > 0 ? (2 * range) / 2 ** bits : 0;
  return (v: number): number => {
    const q = lsb > 0 ? Math.round(v / lsb) * lsb : v;
    return q > range ? range : q < -range ? -range : q;
  };
}

export function createImuGenerator(s: Scenario): ImuGenerator {
  const spec = s.spec;
  const rate = spec.imuRateHz;
  const dt = 1 / rate;
  const count = Math.round(spec.durationS * rate) + 1;
  const realistic = spec.noise === 'realistic';
  const rng = createRng(spec.seed, 'imu');
  const sigG = realistic ? spec.imu.gyroNoiseDensity * Math.sqrt(rate) : 0;
  const sigA = realistic ? spec.imu.accelNoiseDensity * Math.sqrt(rate) : 0;
  const rwG = realistic ? spec.imu.gyroBiasRandomWalk * Math.sqrt(dt) : 0;
  const rwA = realistic ? spec.imu.accelBiasRandomWalk * Math.sqrt(dt) : 0;
  const qG = quantiser(spec.imu.gyroRange, realistic ? spec.imu.bits : 0);
  const qA = quantiser(spec.imu.accelRange, realistic ? spec.imu.bits : 0);
  const gaps = s.faults.filter((f) => f.kind === 'imu-gap').map((f) => [f.startS ?? 0, f.endS ?? 0] as const);
  const units = s.faults.find((f) => f.kind === 'units');
  const gyroFactor = units?.variant === 'gyro-deg' ? 180 / Math.PI : 1;
  const accelFactor = units?.variant === 'accel-g' ? 1 / 9.80665 : 1;
  const bg = vec3.copy(vec3.create(), s.gyroBias0);
  const ba = vec3.copy(vec3.create(), s.accelBias0);
  const st = createKinState();
  const conj = quat.create();
  const fw = vec3.create();
  const fb = vec3.create();
  let next = 0;
  return {
    count,
    fill(k0, n, out) {
      if (k0 !== next) throw new RangeError(`IMU generation must be sequential: expected k0 = ${next}, got ${k0}`);
      out.n = 0;
      const end = Math.min(count, k0 + n);
      for (let k = k0; k < end; k++) {
        const tRel = k * dt;
        s.evaluate(tRel, st);
        vec3.set(fw, st.a[0]!, st.a[1]!, st.a[2]! + s.gravity);
        quat.rotateVec3(fb, quat.conjugate(conj, st.q), fw);
        if (realistic) {
          for (let i = 0; i < 3; i++) {
            bg[i] = bg[i]! + rwG * rng.gauss();
            ba[i] = ba[i]! + rwA * rng.gauss();
          }
        }
        let dropped = false;
        for (const [a, b] of gaps) if (tRel >= a && tRel < b) dropped = true;
        // Noise is drawn even for dropped samples so a gap never shifts the noise of later samples.
        const g0 = qG(st.omegaB[0]! + bg[0]! + sigG * gauss(realistic, rng));
        const g1 = qG(st.omegaB[1]! + bg[1]! + sigG * gauss(realistic, rng));
        const g2 = qG(st.omegaB[2]! + bg[2]! + sigG * gauss(realistic, rng));
        const a0 = qA(fb[0]! + ba[0]! + sigA * gauss(realistic, rng));
        const a1 = qA(fb[1]! + ba[1]! + sigA * gauss(realistic, rng));
        const a2 = qA(fb[2]! + ba[2]! + sigA * gauss(realistic, rng));
        if (dropped) continue;
        const j = out.n++;
        out.t[j] = s.t0Epoch + tRel;
        out.gx[j] = g0 * gyroFactor;
        out.gy[j] = g1 * gyroFactor;
        out.gz[j] = g2 * gyroFactor;
        out.ax[j] = a0 * accelFactor;
        out.ay[j] = a1 * accelFactor;
        out.az[j] = a2 * accelFactor;
      }
      next = end;
      return out.n;
    },
  };
}

function gauss(on: boolean, rng: { gauss(): number }): number {
  return on ? rng.gauss() : 0;
}
