/**
 * Everything true about one run, derived deterministically from its spec: the motion, gravity, the true and the
 * declared extrinsic, the odometry world frame, IMU biases and the resolved fault parameters.
 */
import { geodesy, quat, vec3 } from '@plumbline/geometry';
import type { Quat, Vec3 } from '@plumbline/geometry';
import { createRng } from './prng.ts';
import type { Rng } from './prng.ts';
import { applyImpact, createKinState, finishState } from './motion/kinematics.ts';
import type { ImpactOverlay, KinState, MotionModel } from './motion/kinematics.ts';
import { createGroundMotion } from './motion/ground.ts';
import { createHandheldMotion } from './motion/handheld.ts';
import { SITES, validateRunSpec } from './spec.ts';
import type { FaultSpec, RunSpec } from './spec.ts';

const DEG = Math.PI / 180;

export interface RigidPose {
  /** translation, m */
  t: Vec3;
  /** rotation (Hamilton, w-first) */
  q: Quat;
}

export interface Scenario {
  spec: RunSpec;
  /** run start, epoch seconds */
  t0Epoch: number;
  motion: MotionModel;
  /** WGS-84 normal gravity magnitude at the site, m/s² */
  gravity: number;
  /** true pose of the odometry body in the IMU frame */
  imuTOdomTrue: RigidPose;
  /** pose declared in the manifest (differs under an extrinsic-rotation fault) */
  imuTOdomManifest: RigidPose;
  /** pose of the odometry world frame in ENU */
  enuTOdomWorld: RigidPose;
  worldGravityAlignedClaim: boolean;
  gyroBias0: Vec3;
  accelBias0: Vec3;
  /** GNSS antenna in the IMU frame, m */
  antennaInImu: Vec3;
  impacts: ImpactOverlay[];
  faults: FaultSpec[];
  /** Writes the full true state at tRel (s since start) into out. */
  evaluate(tRel: number, out: KinState): KinState;
}

function unitAxis(a: readonly [number, number, number] | undefined, fallback: [number, number, number]): Vec3 {
  const v = vec3.create(...(a ?? fallback));
  return vec3.normalize(v, v);
}

function axisAngle(axis: Vec3, angleRad: number): Quat {
  return quat.fromRotationVector(quat.create(), axis[0]! * angleRad, axis[1]! * angleRad, axis[2]! * angleRad);
}

/** Mounting of the odometry body: a camera (x right, y down, z forward) for visual sources, else the robot base. */
function trueExtrinsic(spec: RunSpec, rng: Rng): RigidPose {
  const visual = spec.odometrySource === 'visual' || spec.odometrySource === 'visual-inertial';
  const base = quat.create();
  if (visual) {
    const m = new Float64Array([0, 0, 1, -1, 0, 0, 0, -1, 0]);
    quat.fromMat3(base, m);
  }
  // A mounting error of about a degree, as any real rig has.
  const small = quat.fromRotationVector(quat.create(), rng.range(-1, 1) * DEG, rng.range(-1, 1) * DEG, rng.range(-1, 1) * DEG);
  const q = quat.multiply(quat.create(), base, small);
  const t = visual ? vec3.create(0.12, -0.03, 0.08) : vec3.create(-0.25, 0, -0.15);
  return { t, q };
}

/**
 * Builds the scenario of a spec. Pure: the same spec always gives the same scenario. `motionOverride` replaces the
 * ground/handheld model (tests with closed-form motions).
 */
export function createScenario(spec: RunSpec, motionOverride?: MotionModel): Scenario {
  validateRunSpec(spec, motionOverride !== undefined);
  const rng = createRng(spec.seed, 'scenario');
  const site = SITES[spec.site];
  const t0Epoch = Date.parse(spec.startedAt) / 1000;
  if (!Number.isFinite(t0Epoch)) throw new RangeError(`startedAt "${spec.startedAt}" is not an ISO 8601 time`);
  const yaw0 = rng.range(-Math.PI, Math.PI);
  const dock = [rng.range(-20, 20), rng.range(-20, 20), 0.3] as const;
  const vibration = [rng.uniform(), rng.uniform(), rng.uniform(), rng.uniform(), rng.uniform(), rng.uniform()];
  const motion =
    motionOverride ??
    (spec.motion === 'ground'
      ? createGroundMotion(spec.durationS, { dock, yaw0, indoorAisles: site.indoorAisles, speed: 1.2, vibration })
      : createHandheldMotion(spec.durationS, createRng(spec.seed, 'handheld'), { origin: [dock[0], dock[1], 1.2], yaw0 }));
  const realistic = spec.noise === 'realistic';
  const bias = (bound: number) => vec3.create(...[0, 1, 2].map(() => (realistic ? rng.range(-bound, bound) : 0)) as [number, number, number]);
  const gyroBias0 = bias(spec.imu.gyroTurnOnBias);
  const accelBias0 = bias(spec.imu.accelTurnOnBias);
  const imuTOdomTrue = trueExtrinsic(spec, rng);
  const imuTOdomManifest: RigidPose = { t: vec3.copy(vec3.create(), imuTOdomTrue.t), q: quat.copy(quat.create(), imuTOdomTrue.q) };
  const worldYaw = rng.range(-0.3, 0.3);
  let enuQOdomWorld = quat.fromRotationVector(quat.create(), 0, 0, yaw0 + worldYaw);
  const impacts: ImpactOverlay[] = [];
  for (const f of spec.faults) {
    if (f.kind === 'extrinsic-rotation') {
      const err = axisAngle(unitAxis(f.axis, [0.3, 0.8, -0.5]), f.magnitude * DEG);
      quat.multiply(imuTOdomManifest.q, imuTOdomTrue.q, err);
    } else if (f.kind === 'gravity-tilt') {
      const axis = unitAxis(f.axis ? [f.axis[0], f.axis[1], 0] : undefined, [0.6, 0.8, 0]);
      enuQOdomWorld = quat.multiply(quat.create(), enuQOdomWorld, axisAngle(axis, f.magnitude * DEG));
    } else if (f.kind === 'imu-saturation') {
      const gyro = f.variant === 'gyro';
      const range = gyro ? spec.imu.gyroRange : spec.imu.accelRange;
      const amp = f.magnitude > 0 ? f.magnitude : 1.6 * range;
      impacts.push({ t0: f.startS ?? 0, t1: f.endS ?? (f.startS ?? 0) + 0.5, accelAmp: gyro ? 0 : amp, gyroAmp: gyro ? amp : 0, freqHz: 7 });
    }
  }
  const gravity = geodesy.normalGravity(site.latDeg * DEG, site.hM);
  const scenario: Scenario = {
    spec,
    t0Epoch,
    motion,
    gravity,
    imuTOdomTrue,
    imuTOdomManifest,
    enuTOdomWorld: { t: vec3.create(), q: enuQOdomWorld },
    worldGravityAlignedClaim: true,
    gyroBias0,
    accelBias0,
    antennaInImu: vec3.create(-0.1, 0.0, 0.45),
    impacts,
    faults: spec.faults,
    evaluate(tRel, out) {
      motion.evaluateEuler(tRel, out);
      for (const imp of impacts) applyImpact(out, imp, tRel);
      return finishState(out);
    },
  };
  placeOdometryWorld(scenario);
  return scenario;
}

/**
 * The odometry world starts at the first odometry body position. Gravity-aligned sources keep z up (yaw free);
 * a monocular visual source without inertial aid uses its first camera frame as world and says so in the manifest.
 */
function placeOdometryWorld(s: Scenario): void {
  const st = s.evaluate(0, createKinState());
  const p = vec3.create();
  quat.rotateVec3(p, st.q, s.imuTOdomTrue.t);
  vec3.add(s.enuTOdomWorld.t, st.p, p);
  const tilted = s.faults.some((f) => f.kind === 'gravity-tilt');
  if (s.spec.odometrySource === 'visual' && s.spec.monocular && !tilted) {
    quat.multiply(s.enuTOdomWorld.q, st.q, s.imuTOdomTrue.q);
    s.worldGravityAlignedClaim = false;
  }
}

/** Unit vector of gravity expressed in the odometry world frame. */
export function gravityInOdomWorld(s: Scenario): Vec3 {
  const conj = quat.conjugate(quat.create(), s.enuTOdomWorld.q);
  return quat.rotateVec3(vec3.create(), conj, vec3.create(0, 0, -1));
}
