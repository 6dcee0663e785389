/**
 * Ground robot on a fictional site: warehouse aisles with in-place 90° turns and station stops, a ramp down to an
 * outdoor yard, a yard loop, and back to the dock. Each segment runs rest to rest on a quintic S-curve profile, so
 * position is C² everywhere and every derivative is closed-form. Suspension vibration adds small roll/pitch and a
 * vertical bounce scaled by speed.
 */
import type { EulerKinematics, MotionModel } from './kinematics.ts';
import { evalProfile, planProfile, smoothstep } from './profile.ts';
import type { SpeedProfile } from './profile.ts';

const KIND_STOP = 0;
const KIND_LINE = 1;
const KIND_ARC = 2;
const KIND_TURN = 3;

interface Phase {
  kind: number;
  t0: number;
  durationS: number;
  x0: number;
  y0: number;
  z0: number;
  yaw0: number;
  /** line: horizontal length; arc: radius */
  length: number;
  /** line: height change over the segment (ramp), m */
  rise: number;
  /** arc/turn: +1 left (counter-clockwise), −1 right */
  sign: number;
  profile: SpeedProfile;
  outdoor: boolean;
}

export interface GroundOptions {
  /** dock position of the IMU in ENU, m */
  dock: readonly [number, number, number];
  /** heading of the aisles at the dock, rad from east, counter-clockwise */
  yaw0: number;
  /** true when the aisles are indoors (no GNSS), false for an all-outdoor yard */
  indoorAisles: boolean;
  /** cruise speed, m/s */
  speed: number;
  /** vibration phases/frequencies are drawn from this (deterministic) list of numbers in [0, 1) */
  vibration: readonly number[];
}

const RAMP_S = 2;
const TURN_RATE = 0.8;
const TURN_RAMP_S = 1.5;
const START_REST_S = 6;
const END_REST_S = 6;
const V_REF = 1.2;

type Op = ['stop', number] | ['fwd', number, number, boolean] | ['turn', number] | ['arc', number, number];

/** One lap at size factor k: 'full' visits aisles, ramp and yard; 'short' drives out along an aisle and back. */
function lapOps(k: number, template: 'full' | 'short', indoor: boolean): Op[] {
  const q = Math.PI / 2;
  if (template === 'short') {
    const a = 40 * k;
    return [['stop', 2], ['fwd', a, 0, !indoor], ['stop', 3], ['turn', q], ['turn', q], ['fwd', a, 0, !indoor], ['turn', q], ['turn', q]];
  }
  const A = 30 * k;
  const W = Math.max(3, 4 * k);
  const Lr = Math.max(8, 12 * k);
  const R = Math.max(4, 8 * k);
  const o = !indoor;
  return [
    ['stop', 2], ['fwd', A / 2, 0, o], ['stop', 3], ['fwd', A / 2, 0, o],
    ['turn', q], ['fwd', W, 0, o], ['turn', q],
    ['fwd', A / 2, 0, o], ['stop', 3], ['fwd', A / 2, 0, o],
    ['turn', -q], ['fwd', W, 0, o], ['turn', -q],
    ['fwd', A, 0, o], ['turn', q], ['fwd', W, 0, o], ['turn', q], ['fwd', A, 0, o],
    ['fwd', Lr, -1.2, true], ['arc', R, 2 * Math.PI], ['stop', 3], ['turn', q], ['turn', q],
    ['fwd', Lr, 1.2, true], ['turn', -q], ['fwd', 3 * W, 0, o], ['turn', q],
  ];
}

function opsDuration(ops: Op[], speed: number): number {
  let d = 0;
  for (const op of ops) {
    if (op[0] === 'stop') d += op[1];
    else if (op[0] === 'fwd') d += planProfile(op[1], speed, RAMP_S).durationS;
    else if (op[0] === 'turn') d += planProfile(Math.abs(op[1]), TURN_RATE, TURN_RAMP_S).durationS;
    else d += planProfile(op[1] * Math.abs(op[2]), speed, RAMP_S).durationS;
  }
  return d;
}

/** Picks a template, size and number of laps that fill the run and end back at the dock. */
function planLaps(durationS: number, speed: number, indoor: boolean): Op[] {
  const budget = durationS - START_REST_S - END_REST_S;
  for (const template of ['full', 'short'] as const) {
    const kMin = template === 'full' ? 0.3 : 0.05;
    const one = opsDuration(lapOps(1, template, indoor), speed);
    const smallest = opsDuration(lapOps(kMin, template, indoor), speed);
    let laps = Math.max(1, Math.ceil(budget / one));
    while (laps > 1 && laps * smallest > budget) laps--;
    if (laps * smallest > budget) continue;
    let lo = kMin;
    let hi = 1;
    for (let i = 0; i < 40; i++) {
      const mid = 0.5 * (lo + hi);
      if (laps * opsDuration(lapOps(mid, template, indoor), speed) <= budget) lo = mid;
      else hi = mid;
    }
    const ops: Op[] = [];
    for (let i = 0; i < laps; i++) ops.push(...lapOps(lo, template, indoor));
    return ops;
  }
  return [];
}

/** Builds the ground route as a timeline of phases (s since start). */
export function createGroundMotion(durationS: number, opt: GroundOptions): MotionModel & { phaseStarts: Float64Array } {
  if (durationS < START_REST_S + END_REST_S) throw new RangeError(`duration ${durationS} s is shorter than the rests`);
  const ops = planLaps(durationS, opt.speed, opt.indoorAisles);
  const phases: Phase[] = [];
  let [x, y, z] = opt.dock;
  let yaw = opt.yaw0;
  let t = 0;
  let path = 0;
  const push = (kind: number, dur: number, length: number, rise: number, sign: number, prof: SpeedProfile, outdoor: boolean) => {
    phases.push({ kind, t0: t, durationS: dur, x0: x, y0: y, z0: z, yaw0: yaw, length, rise, sign, profile: prof, outdoor });
    t += dur;
  };
  const rest = planProfile(0, 1, 1);
  push(KIND_STOP, START_REST_S, 0, 0, 1, rest, !opt.indoorAisles);
  for (const op of ops) {
    if (op[0] === 'stop') push(KIND_STOP, op[1], 0, 0, 1, rest, phases[phases.length - 1]!.outdoor);
    else if (op[0] === 'fwd') {
      const prof = planProfile(op[1], opt.speed, RAMP_S);
      push(KIND_LINE, prof.durationS, op[1], op[2], 1, prof, op[3]);
      x += op[1] * Math.cos(yaw);
      y += op[1] * Math.sin(yaw);
      z += op[2];
      path += Math.hypot(op[1], op[2]);
    } else if (op[0] === 'turn') {
      const prof = planProfile(Math.abs(op[1]), TURN_RATE, TURN_RAMP_S);
      push(KIND_TURN, prof.durationS, 0, 0, Math.sign(op[1]), prof, phases[phases.length - 1]!.outdoor);
      yaw += op[1];
    } else {
      const prof = planProfile(op[1] * Math.abs(op[2]), opt.speed, RAMP_S);
      push(KIND_ARC, prof.durationS, op[1], 0, Math.sign(op[2]), prof, true);
      yaw += op[2];
      path += op[1] * Math.abs(op[2]);
    }
  }
  push(KIND_STOP, Math.max(END_REST_S, durationS - t), 0, 0, 1, rest, !opt.indoorAisles);
  const phaseStarts = Float64Array.from(phases, (p) => p.t0);
  return {
    durationS,
    pathLengthM: path,
    phaseStarts,
    // The last phase is open-ended (a sample exactly at the end of the run belongs to it).
    outdoorIntervals: mergeIntervals(
      phases.filter((p) => p.outdoor).map((p) => [p.t0, p === phases[phases.length - 1] ? Number.POSITIVE_INFINITY : p.t0 + p.durationS] as const),
    ),
    evaluateEuler: makeEvaluator(phases, phaseStarts, opt.vibration),
  };
}

function mergeIntervals(list: (readonly [number, number])[]): [number, number][] {
  const out: [number, number][] = [];
  for (const [a, b] of list) {
    const last = out[out.length - 1];
    if (last && Math.abs(last[1] - a) < 1e-9) last[1] = b;
    else out.push([a, b]);
  }
  return out;
}

/** Profile derivatives [s, ṡ, s̈, s⃛] of the current phase; shared scratch (the evaluator is single-threaded). */
const sd = new Float64Array(4);
const sm = new Float64Array(3);

/** Straight segment with an optional smooth ramp z = z0 + rise·S(s/L); pitch follows the slope. */
function evalLine(ph: Phase, out: EulerKinematics): void {
  const c = Math.cos(ph.yaw0), s = Math.sin(ph.yaw0);
  smoothstep(sm, sd[0]! / ph.length);
  const slope = (ph.rise * sm[1]!) / ph.length;
  const curv = (ph.rise * sm[2]!) / (ph.length * ph.length);
  out.p[0] = ph.x0 + sd[0]! * c;
  out.p[1] = ph.y0 + sd[0]! * s;
  out.p[2] = ph.z0 + ph.rise * sm[0]!;
  out.v[0] = sd[1]! * c;
  out.v[1] = sd[1]! * s;
  out.v[2] = sd[1]! * slope;
  out.a[0] = sd[2]! * c;
  out.a[1] = sd[2]! * s;
  out.a[2] = sd[2]! * slope + curv * sd[1]! * sd[1]!;
  // Climbing tilts the nose up, which is a negative pitch in the ZYX convention with z up.
  out.euler[1] = -Math.atan(slope);
  out.eulerRate[1] = -(curv * sd[1]!) / (1 + slope * slope);
}

/** Circular arc of radius r turning with sign sg (+1 left); heading stays tangent. */
function evalArc(ph: Phase, out: EulerKinematics): void {
  const r = ph.length, sg = ph.sign;
  const cx = ph.x0 - sg * r * Math.sin(ph.yaw0), cy = ph.y0 + sg * r * Math.cos(ph.yaw0);
  const alpha = ph.yaw0 - (sg * Math.PI) / 2 + (sg * sd[0]!) / r;
  const a1 = (sg * sd[1]!) / r, a2 = (sg * sd[2]!) / r;
  const ca = Math.cos(alpha), sa = Math.sin(alpha);
  out.p[0] = cx + r * ca;
  out.p[1] = cy + r * sa;
  out.v[0] = -r * a1 * sa;
  out.v[1] = r * a1 * ca;
  out.a[0] = -r * a2 * sa - r * a1 * a1 * ca;
  out.a[1] = r * a2 * ca - r * a1 * a1 * sa;
  out.euler[2] = ph.yaw0 + (sg * sd[0]!) / r;
  out.eulerRate[2] = a1;
}

/** Suspension vibration scaled by u = speed / V_REF (with u̇, ü): roll, pitch and vertical bounce. */
function makeVibration(vib: readonly number[]) {
  const v = (i: number) => vib[i % vib.length] ?? 0.5;
  // Roll/pitch 0.2°/0.15° at 2.5–3.5 Hz, vertical bounce 0.5 mm at 4.5–5.5 Hz (≈0.5 m/s² peak).
  const rollAmp = (0.2 * Math.PI) / 180, pitchAmp = (0.15 * Math.PI) / 180, bounceAmp = 0.0005;
  const wr = 2 * Math.PI * (2.5 + v(0)), wp = 2 * Math.PI * (2.5 + v(1)), wz = 2 * Math.PI * (4.5 + v(2));
  const pr = 2 * Math.PI * v(3), pp = 2 * Math.PI * v(4), pz = 2 * Math.PI * v(5);
  return (out: EulerKinematics, tRel: number, u: number, u1: number, u2: number): void => {
    const sr = Math.sin(wr * tRel + pr), sp = Math.sin(wp * tRel + pp), sz = Math.sin(wz * tRel + pz);
    const cr = Math.cos(wr * tRel + pr), cp = Math.cos(wp * tRel + pp), cz = Math.cos(wz * tRel + pz);
    out.euler[0]! += rollAmp * u * sr;
    out.eulerRate[0]! += rollAmp * (u1 * sr + u * wr * cr);
    out.euler[1]! += pitchAmp * u * sp;
    out.eulerRate[1]! += pitchAmp * (u1 * sp + u * wp * cp);
    out.p[2]! += bounceAmp * u * sz;
    out.v[2]! += bounceAmp * (u1 * sz + u * wz * cz);
    out.a[2]! += bounceAmp * (u2 * sz + 2 * u1 * wz * cz - u * wz * wz * sz);
  };
}

function makeEvaluator(phases: Phase[], starts: Float64Array, vib: readonly number[]) {
  const vibrate = makeVibration(vib);
  let cursor = 0;
  return function evaluateEuler(tRel: number, out: EulerKinematics): EulerKinematics {
    if (tRel < starts[cursor]! || (cursor + 1 < starts.length && tRel >= starts[cursor + 1]!)) {
      let lo = 0;
      let hi = starts.length - 1;
      while (lo < hi) {
        const mid = (lo + hi + 1) >> 1;
        if (starts[mid]! <= tRel) lo = mid;
        else hi = mid - 1;
      }
      cursor = lo;
    }
    const ph = phases[cursor]!;
    evalProfile(sd, ph.profile, tRel - ph.t0);
    out.v.fill(0);
    out.a.fill(0);
    out.eulerRate.fill(0);
    vec3Set(out.euler, 0, 0, ph.yaw0);
    vec3Set(out.p, ph.x0, ph.y0, ph.z0);
    if (ph.kind === KIND_TURN) {
      out.euler[2] = ph.yaw0 + ph.sign * sd[0]!;
      out.eulerRate[2] = ph.sign * sd[1]!;
    } else if (ph.kind === KIND_LINE || ph.kind === KIND_ARC) {
      if (ph.kind === KIND_LINE) evalLine(ph, out);
      else evalArc(ph, out);
      if (sd[1] !== 0 || sd[2] !== 0) vibrate(out, tRel, sd[1]! / V_REF, sd[2]! / V_REF, sd[3]! / V_REF);
    }
    return out;
  };
}

function vec3Set(out: Float64Array, x: number, y: number, z: number): void {
  out[0] = x;
  out[1] = y;
  out[2] = z;
}
