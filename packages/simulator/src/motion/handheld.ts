/**
 * Handheld mapping motion: a person walks a slow loop while the device sways in all six degrees of freedom. Every
 * coordinate is a sum of sinusoids multiplied by a smooth envelope that keeps the device still for the first and last
 * seconds, so accelerometer and gyro are excited on every axis (needed by visual–inertial gravity/scale alignment)
 * and all derivatives are closed-form.
 */
import type { Rng } from '../prng.ts';
import type { EulerKinematics, MotionModel } from './kinematics.ts';
import { smoothstep } from './profile.ts';

const REST_S = 6;
const RAMP_S = 4;
/** Per channel: x, y, z, roll, pitch, yaw; three harmonics each. */
const CHANNELS = 6;
const HARMONICS = 3;

export interface HandheldOptions {
  /** start position in ENU, m */
  origin: readonly [number, number, number];
  yaw0: number;
}

/** Creates the handheld model; amplitudes and frequencies come from `rng` (deterministic). */
export function createHandheldMotion(durationS: number, rng: Rng, opt: HandheldOptions): MotionModel {
  if (durationS < 2 * (REST_S + RAMP_S)) throw new RangeError(`handheld duration ${durationS} s is too short`);
  const amp = new Float64Array(CHANNELS * HARMONICS);
  const omega = new Float64Array(CHANNELS * HARMONICS);
  const phase = new Float64Array(CHANNELS * HARMONICS);
  // Amplitudes (m or rad) per channel for the slow, medium and fast harmonic.
  const base = [
    [3, 0.25, 0.04], [3, 0.25, 0.04], [0.3, 0.12, 0.03],
    [0.25, 0.12, 0.03], [0.25, 0.12, 0.03], [0.8, 0.2, 0.05],
  ];
  const freq = [0.02, 0.35, 1.3];
  for (let c = 0; c < CHANNELS; c++) {
    for (let h = 0; h < HARMONICS; h++) {
      const i = c * HARMONICS + h;
      amp[i] = base[c]![h]! * rng.range(0.7, 1.3);
      omega[i] = 2 * Math.PI * freq[h]! * rng.range(0.8, 1.25);
      phase[i] = rng.range(0, 2 * Math.PI);
    }
  }
  const env = new Float64Array(3);
  const tEnd = durationS - REST_S;
  let pathLength = 0;
  const model: MotionModel = {
    durationS,
    pathLengthM: 0,
    outdoorIntervals: [[0, Number.POSITIVE_INFINITY]],
    evaluateEuler(tRel: number, out: EulerKinematics): EulerKinematics {
      // Envelope w(t) = S((t − rest)/ramp)·S((tEnd − t)/ramp) with its first two derivatives.
      smoothstep(env, (tRel - REST_S) / RAMP_S);
      const w1 = env[0]!, w1d = env[1]! / RAMP_S, w1dd = env[2]! / (RAMP_S * RAMP_S);
      smoothstep(env, (tEnd - tRel) / RAMP_S);
      const w2 = env[0]!, w2d = -env[1]! / RAMP_S, w2dd = env[2]! / (RAMP_S * RAMP_S);
      const w = w1 * w2;
      const wd = w1d * w2 + w1 * w2d;
      const wdd = w1dd * w2 + 2 * w1d * w2d + w1 * w2dd;
      for (let c = 0; c < CHANNELS; c++) {
        let f = 0, fd = 0, fdd = 0;
        for (let h = 0; h < HARMONICS; h++) {
          const i = c * HARMONICS + h;
          const A = amp[i]!, W = omega[i]!;
          // Sinusoids start at zero value (sin(Wt+φ) − sin φ) so the rest pose is the origin.
          const arg = W * tRel + phase[i]!;
          f += A * (Math.sin(arg) - Math.sin(phase[i]!));
          fd += A * W * Math.cos(arg);
          fdd -= A * W * W * Math.sin(arg);
        }
        const g = w * f;
        const gd = wd * f + w * fd;
        const gdd = wdd * f + 2 * wd * fd + w * fdd;
        if (c < 3) {
          out.p[c] = opt.origin[c]! + g;
          out.v[c] = gd;
          out.a[c] = gdd;
        } else {
          out.euler[c - 3] = g + (c === 5 ? opt.yaw0 : 0);
          out.eulerRate[c - 3] = gd;
        }
      }
      return out;
    },
  };
  // Path length by fine sampling (10 Hz is ample for motion below 2 Hz at this amplitude).
  const s = { p: new Float64Array(3), v: new Float64Array(3), a: new Float64Array(3), euler: new Float64Array(3), eulerRate: new Float64Array(3) };
  for (let t = 0; t < durationS; t += 0.1) {
    model.evaluateEuler(t, s);
    pathLength += 0.1 * Math.hypot(s.v[0]!, s.v[1]!, s.v[2]!);
  }
  return { ...model, pathLengthM: pathLength };
}
