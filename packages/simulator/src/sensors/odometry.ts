/**
 * Odometry as a VO/VIO front end reports it: the pose of the odometry body (IMU pose ∘ imu_T_odom, true extrinsic)
 * in the odometry world frame, built by accumulating noisy RELATIVE motions, so error grows with distance
 * (≈0.5–1 % of distance, common practice per CHECK-VALUES.md) and heading drifts slowly about gravity.
 * Faults act here: time offset and clock skew on the stamps, scale (monocular, linear drift, step), pose jump, gap.
 */
import type { OdometryColumns } from '@plumbline/bundle';
import { quat, vec3 } from '@plumbline/geometry';
import { createKinState } from '../motion/kinematics.ts';
import { createRng } from '../prng.ts';
import type { Scenario } from '../scenario.ts';

export interface OdometryBlock extends Omit<OdometryColumns, 'quality'> {
  quality: Float64Array;
  /** the physical instant of the pose, s since run start (IMU clock); not written to the bundle */
  tTrue: Float64Array;
}

export function createOdometryBlock(capacity: number): OdometryBlock {
  const c = () => new Float64Array(capacity);
  return { n: 0, t: c(), x: c(), y: c(), z: c(), qw: c(), qx: c(), qy: c(), qz: c(), quality: c(), tTrue: c() };
}

/** Odometry clock minus IMU clock at tRel (s), from the time-offset faults. */
export function odometryClockOffset(s: Scenario, tRel: number): number {
  let off = 0;
  for (const f of s.faults) {
    if (f.kind !== 'time-offset') continue;
    if (f.variant === 'skew') off += f.magnitude * 1e-6 * Math.max(0, tRel - (f.startS ?? 0));
    else off += f.magnitude;
  }
  return off;
}

export interface OdometryGenerator {
  readonly count: number;
  fill(k0: number, count: number, out: OdometryBlock): number;
}

/** Correlation length of the odometry scale error, m. */
const SCALE_CORR_M = 300;

export function createOdometryGenerator(s: Scenario): OdometryGenerator {
  const spec = s.spec;
  const dt = 1 / spec.odometryRateHz;
  const count = Math.floor(spec.durationS * spec.odometryRateHz) + 1;
  const real = spec.noise === 'realistic';
  const rng = createRng(spec.seed, 'odometry');
  const g = () => (real ? rng.gauss() : 0);
  // Drift parameters per run (common practice for VO error budgets).
  const scaleBias = real ? 0.006 * rng.gauss() : 0;
  const yawDriftPerM = real ? 3e-4 * rng.gauss() : 0;
  const sigScaleRw = 6e-4, sigT = 0.002, sigYaw = 6e-4, sigJitter = 3e-4;
  // The scale error wanders like a first-order Gauss–Markov process in distance (IEEE Std 952-1997 error model,
  // common practice): over short distances a random walk of σ = 6e-4/√m, but mean-reverting over SCALE_CORR_M so
  // that it stays bounded (stationary σ = 6e-4·√(SCALE_CORR_M/2) ≈ 0.7 %) on runs of many kilometres; an unbounded
  // walk reached ±9 % (1σ) after the 25 km of an 8-hour shift, a scale fault on a clean run.
  const scaleSigSs = sigScaleRw * Math.sqrt(SCALE_CORR_M / 2);
  const linear = s.faults.filter((f) => f.kind === 'scale-drift' && f.variant !== 'step');
  const steps = s.faults.filter((f) => f.kind === 'scale-drift' && f.variant === 'step');
  const jumps = s.faults.filter((f) => f.kind === 'pose-jump');
  const gaps = s.faults.filter((f) => f.kind === 'odometry-gap');
  const jumpDirs = jumps.map((f) => jumpDirection(f.axis));
  const st = createKinState();
  const conjW = quat.conjugate(quat.create(), s.enuTOdomWorld.q);
  const pTrue = vec3.create(), pPrev = vec3.create(), qTrue = quat.create(), qPrev = quat.create();
  const pRep = vec3.create(), qRep = quat.create(), d = vec3.create(), tmp = vec3.create(), qd = quat.create();
  const jitter = quat.create();
  let scaleErr = 0, yawDrift = 0, dist = 0;
  const distAtLinearStart = linear.map(() => Number.NaN);
  let next = 0;

  function truePose(tRel: number): void {
    s.evaluate(tRel, st);
    // ENU pose of the odometry body, then into the odometry world frame.
    quat.rotateVec3(tmp, st.q, s.imuTOdomTrue.t);
    vec3.add(tmp, tmp, st.p);
    vec3.sub(tmp, tmp, s.enuTOdomWorld.t);
    quat.rotateVec3(pTrue, conjW, tmp);
    quat.multiply(qTrue, st.q, s.imuTOdomTrue.q);
    quat.multiply(qTrue, conjW, qTrue);
  }

  /** Latches the true distance travelled when each linear drift starts (before the current step is added). */
  function latchLinearStarts(tRel: number): void {
    for (let i = 0; i < linear.length; i++) {
      if (tRel >= (linear[i]!.startS ?? 0) && Number.isNaN(distAtLinearStart[i]!)) distAtLinearStart[i] = dist;
    }
  }

  /** Scale at tRel, with `dist` including the current step. */
  function scaleAt(tRel: number): number {
    let sc = spec.scale;
    for (let i = 0; i < linear.length; i++) {
      const f = linear[i]!;
      if (tRel < (f.startS ?? 0)) continue;
      sc *= 1 + (f.magnitude / 100) * ((dist - distAtLinearStart[i]!) / 100);
    }
    for (const f of steps) if (tRel >= (f.startS ?? 0)) sc *= 1 + f.magnitude / 100;
    return sc;
  }

  /** Advances the reported pose to frame k at tRel by one noisy relative motion (frame 0: the true pose). */
  function advance(k: number, tRel: number): void {
    truePose(tRel);
    if (k === 0) {
      vec3.scale(pRep, pTrue, 1 / spec.scale);
      quat.copy(qRep, qTrue);
    } else {
      vec3.sub(d, pTrue, pPrev);
      const len = vec3.norm(d);
      const turn = quat.angleBetween(qPrev, qTrue);
      latchLinearStarts(tRel);
      dist += len;
      const decay = Math.exp(-len / SCALE_CORR_M);
      scaleErr = scaleErr * decay + scaleSigSs * Math.sqrt(1 - decay * decay) * g();
      yawDrift += yawDriftPerM * len + sigYaw * Math.sqrt(len + 0.2 * turn) * g();
      const f = (1 + scaleBias + scaleErr) / scaleAt(tRel);
      const nt = sigT * Math.sqrt(len);
      vec3.set(tmp, d[0]! * f + nt * g(), d[1]! * f + nt * g(), d[2]! * f + nt * g());
      // Heading drift rotates both the accumulated increments and the attitude about the world z axis.
      quat.fromRotationVector(qd, 0, 0, yawDrift);
      quat.rotateVec3(tmp, qd, tmp);
      vec3.add(pRep, pRep, tmp);
      quat.multiply(qRep, qd, qTrue);
      if (real) quat.multiply(qRep, qRep, quat.fromRotationVector(jitter, sigJitter * g(), sigJitter * g(), sigJitter * g()));
      for (let i = 0; i < jumps.length; i++) {
        const at = jumps[i]!.startS ?? 0;
        if (tRel >= at && tRel - dt < at) vec3.scaleAndAdd(pRep, pRep, jumpDirs[i]!, jumps[i]!.magnitude / spec.scale);
      }
    }
    vec3.copy(pPrev, pTrue);
    quat.copy(qPrev, qTrue);
    if (qRep[0]! < 0) quat.set(qRep, -qRep[0]!, -qRep[1]!, -qRep[2]!, -qRep[3]!);
  }

  return {
    count,
    fill(k0, n, out) {
      if (k0 !== next) throw new RangeError(`odometry generation must be sequential: expected ${next}, got ${k0}`);
      out.n = 0;
      const end = Math.min(count, k0 + n);
      for (let k = k0; k < end; k++) {
        const tRel = k * dt;
        advance(k, tRel);
        let inGap = false;
        for (const f of gaps) if (tRel >= (f.startS ?? 0) && tRel < (f.endS ?? 0)) inGap = true;
        if (inGap) continue;
        const j = out.n++;
        out.t[j] = s.t0Epoch + tRel + odometryClockOffset(s, tRel);
        out.tTrue[j] = tRel;
        out.x[j] = pRep[0]!;
        out.y[j] = pRep[1]!;
        out.z[j] = pRep[2]!;
        out.qw[j] = qRep[0]!;
        out.qx[j] = qRep[1]!;
        out.qy[j] = qRep[2]!;
        out.qz[j] = qRep[3]!;
        out.quality[j] = quality(s, tRel, st.omegaB, real ? rng.uniform() : 0.5);
      }
      next = end;
      return out.n;
    },
  };
}

/** Unit jump direction in the odometry world (horizontal unless an axis is given). */
export function jumpDirection(axis: readonly [number, number, number] | undefined): Float64Array {
  const v = vec3.create(...(axis ?? [0.8, -0.6, 0]));
  return vec3.normalize(v, v);
}

/** Tracking quality 0..1: high when tracking, lower in fast turns, low around re-initialisations. */
function quality(s: Scenario, tRel: number, omega: Float64Array, u: number): number {
  for (const f of s.faults) {
    const at = f.startS ?? 0;
    const reinit = f.kind === 'pose-jump' || (f.kind === 'scale-drift' && f.variant === 'step');
    if (reinit && tRel >= at - 1 && tRel < at + 0.5) return 0.2 + 0.1 * u;
  }
  const w = vec3.norm(omega);
  return Math.min(1, Math.max(0, 0.97 - 0.3 * Math.min(1, w / 1.2) - 0.04 * u));
}
