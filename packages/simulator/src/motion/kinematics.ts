/**
 * Kinematic state of the IMU frame in the site's local ENU frame (x east, y north, z up), and the conversion from
 * ZYX Euler angles and their rates to a Hamilton quaternion and body angular velocity.
 */
import { quat, vec3 } from '@plumbline/geometry';
import type { Quat, Vec3 } from '@plumbline/geometry';

/** Kinematics as motion models produce them: ENU position/velocity/acceleration, Euler angles and rates. */
export interface EulerKinematics {
  /** position of the IMU in ENU, m */
  p: Vec3;
  /** velocity, m/s */
  v: Vec3;
  /** acceleration (kinematic, not specific force), m/s² */
  a: Vec3;
  /** [roll, pitch, yaw] rad, R = Rz(yaw)·Ry(pitch)·Rx(roll) */
  euler: Vec3;
  /** time derivatives of [roll, pitch, yaw], rad/s */
  eulerRate: Vec3;
}

/** Full kinematic state of the IMU frame at one instant. */
export interface KinState extends EulerKinematics {
  /** orientation of the IMU in ENU (q ⊗ v_imu ⊗ q* = v_enu) */
  q: Quat;
  /** angular velocity in the IMU frame, rad/s */
  omegaB: Vec3;
}

export function createKinState(): KinState {
  return {
    p: vec3.create(),
    v: vec3.create(),
    a: vec3.create(),
    euler: vec3.create(),
    eulerRate: vec3.create(),
    q: quat.create(),
    omegaB: vec3.create(),
  };
}

/** A motion model is analytic: any time gives exactly consistent position, velocity, acceleration and rates. */
export interface MotionModel {
  readonly durationS: number;
  /** Horizontal-plus-vertical path length of the IMU, m. */
  readonly pathLengthM: number;
  /** Writes Euler kinematics at tRel (s since run start) into out. */
  evaluateEuler(tRel: number, out: EulerKinematics): EulerKinematics;
  /** Time intervals (s since start) when the robot is outdoors (GNSS visible). */
  readonly outdoorIntervals: ReadonlyArray<readonly [number, number]>;
}

/**
 * Completes the state: quaternion of R = Rz(ψ)Ry(θ)Rx(φ) and body rates
 * ω_b = [φ̇ − ψ̇ sinθ, θ̇ cosφ + ψ̇ cosθ sinφ, −θ̇ sinφ + ψ̇ cosθ cosφ]
 * (ZYX Euler kinematics, e.g. J. Diebel, "Representing Attitude", Stanford 2006, §5.6 — from memory).
 */
export function finishState(s: KinState): KinState {
  const roll = s.euler[0]!, pitch = s.euler[1]!, yaw = s.euler[2]!;
  const dr = s.eulerRate[0]!, dp = s.eulerRate[1]!, dy = s.eulerRate[2]!;
  const cr = Math.cos(0.5 * roll), sr = Math.sin(0.5 * roll);
  const cp = Math.cos(0.5 * pitch), sp = Math.sin(0.5 * pitch);
  const cy = Math.cos(0.5 * yaw), sy = Math.sin(0.5 * yaw);
  quat.set(
    s.q,
    cr * cp * cy + sr * sp * sy,
    sr * cp * cy - cr * sp * sy,
    cr * sp * cy + sr * cp * sy,
    cr * cp * sy - sr * sp * cy,
  );
  const sinR = Math.sin(roll), cosR = Math.cos(roll), sinP = Math.sin(pitch), cosP = Math.cos(pitch);
  s.omegaB[0] = dr - dy * sinP;
  s.omegaB[1] = dp * cosR + dy * cosP * sinR;
  s.omegaB[2] = -dp * sinR + dy * cosP * cosR;
  return s;
}

/** A short impact or shake overlaid on the motion: sub-millimetre displacement, large acceleration or rate. */
export interface ImpactOverlay {
  t0: number;
  t1: number;
  /** peak vertical acceleration amplitude, m/s² (0 for none) */
  accelAmp: number;
  /** peak roll-rate amplitude, rad/s (0 for none) */
  gyroAmp: number;
  /** oscillation frequency, Hz */
  freqHz: number;
}

/**
 * Adds an impact: z_i = (A/Ω²)·e(τ)·sin(Ωτ), roll_i = (W/Ω)·e(τ)·sin(Ωτ) with the envelope e = sin²(πτ/T), so the
 * overlay and its first two derivatives vanish at both ends and the state stays exactly consistent.
 */
export function applyImpact(out: EulerKinematics, imp: ImpactOverlay, tRel: number): void {
  if (tRel <= imp.t0 || tRel >= imp.t1) return;
  const T = imp.t1 - imp.t0;
  const tau = tRel - imp.t0;
  const W = 2 * Math.PI * imp.freqHz;
  const k = Math.PI / T;
  const e = Math.sin(k * tau) ** 2;
  const e1 = k * Math.sin(2 * k * tau);
  const e2 = 2 * k * k * Math.cos(2 * k * tau);
  const s = Math.sin(W * tau);
  const c = Math.cos(W * tau);
  const f = e * s;
  const f1 = e1 * s + e * W * c;
  const f2 = e2 * s + 2 * e1 * W * c - e * W * W * s;
  const za = imp.accelAmp / (W * W);
  out.p[2]! += za * f;
  out.v[2]! += za * f1;
  out.a[2]! += za * f2;
  const ra = imp.gyroAmp / W;
  out.euler[0]! += ra * f;
  out.eulerRate[0]! += ra * f1;
}
