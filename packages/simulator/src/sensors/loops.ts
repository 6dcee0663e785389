/**
 * Loop-closure candidates as the robot's own place recognition reports them: the pose of the odometry body at t_b
 * in the body frame at t_a (translation in odometry units, i.e. metres / scale), with 1-sigma columns. True revisits
 * come from 1 Hz keyframes that are within 1 m and 30° of an earlier keyframe at least 30 s before (grid hash, O(n)
 * for bounded revisit counts). A loop-mismatch fault adds a confident candidate between two distinct places.
 * Loop times are stamps on the odometry clock, like odometry.csv.
 */
import type { LoopColumns } from '@plumbline/bundle';
import { quat, vec3 } from '@plumbline/geometry';
import { createKinState } from '../motion/kinematics.ts';
import { createRng } from '../prng.ts';
import type { Scenario } from '../scenario.ts';
import { odometryClockOffset } from './odometry.ts';

export interface LoopBlock extends LoopColumns {
  /** 1 for a true revisit, 0 for an injected false one (not written) */
  genuine: Uint8Array;
}

export interface FalseLoop {
  tARel: number;
  tBRel: number;
  /** true distance between the two places, m */
  separationM: number;
}

const MIN_GAP_S = 30;
const MAX_DIST_M = 1;
const MAX_ANGLE_RAD = (30 * Math.PI) / 180;
const CELL_M = 2;

/** Generates all loop candidates of the run (keyframes are few: one per second). */
export function generateLoops(s: Scenario): { loops: LoopBlock; falseLoops: FalseLoop[] } {
  const spec = s.spec;
  const real = spec.noise === 'realistic';
  const rng = createRng(spec.seed, 'loops');
  const nk = Math.floor(spec.durationS) + 1;
  const P = new Float64Array(3 * nk);
  const Q = new Float64Array(4 * nk);
  const st = createKinState();
  const tmp = vec3.create();
  const qb = quat.create();
  for (let k = 0; k < nk; k++) {
    s.evaluate(k, st);
    quat.rotateVec3(tmp, st.q, s.imuTOdomTrue.t);
    P.set([st.p[0]! + tmp[0]!, st.p[1]! + tmp[1]!, st.p[2]! + tmp[2]!], 3 * k);
    quat.multiply(qb, st.q, s.imuTOdomTrue.q);
    Q.set(qb, 4 * k);
  }
  const pairs: [number, number, boolean][] = [];
  const grid = new Map<string, number[]>();
  let nextAllowed = 0;
  const qa = new Float64Array(4), qc = new Float64Array(4);
  for (let b = 0; b < nk; b++) {
    const cx = Math.floor(P[3 * b]! / CELL_M), cy = Math.floor(P[3 * b + 1]! / CELL_M);
    if (b >= nextAllowed) {
      let best = -1, bestD = MAX_DIST_M;
      for (let dx = -1; dx <= 1; dx++) {
        for (let dy = -1; dy <= 1; dy++) {
          for (const a of grid.get(`${cx + dx},${cy + dy}`) ?? []) {
            if (b - a < MIN_GAP_S) continue;
            const d = Math.hypot(P[3 * b]! - P[3 * a]!, P[3 * b + 1]! - P[3 * a + 1]!, P[3 * b + 2]! - P[3 * a + 2]!);
            qa.set(Q.subarray(4 * a, 4 * a + 4));
            qc.set(Q.subarray(4 * b, 4 * b + 4));
            if (d < bestD && quat.angleBetween(qa, qc) < MAX_ANGLE_RAD) {
              best = a;
              bestD = d;
            }
          }
        }
      }
      if (best >= 0) {
        pairs.push([best, b, true]);
        nextAllowed = b + 15;
      }
    }
    // Only register keyframes older than the minimum gap (cheap insert after the query).
    const key = `${cx},${cy}`;
    const cell = grid.get(key);
    if (cell) cell.push(b);
    else grid.set(key, [b]);
  }
  const falseLoops: FalseLoop[] = [];
  for (const f of s.faults.filter((x) => x.kind === 'loop-mismatch')) {
    const a = Math.min(nk - 1, Math.max(0, Math.round(f.startS ?? 0)));
    let b = -1, far = -1, farD = -1;
    for (let k = a + 20; k < nk; k++) {
      const d = Math.hypot(P[3 * k]! - P[3 * a]!, P[3 * k + 1]! - P[3 * a + 1]!, P[3 * k + 2]! - P[3 * a + 2]!);
      if (d >= f.magnitude) {
        b = k;
        break;
      }
      if (d > farD) [far, farD] = [k, d];
    }
    if (b < 0) b = far;
    if (b < 0) continue;
    pairs.push([a, b, false]);
    const sep = Math.hypot(P[3 * b]! - P[3 * a]!, P[3 * b + 1]! - P[3 * a + 1]!, P[3 * b + 2]! - P[3 * a + 2]!);
    falseLoops.push({ tARel: a, tBRel: b, separationM: sep });
  }
  pairs.sort((x, y) => x[1] - y[1] || x[0] - y[0]);
  return { loops: measure(s, pairs, P, Q, real, rng), falseLoops };
}

function measure(
  s: Scenario,
  pairs: [number, number, boolean][],
  P: Float64Array,
  Q: Float64Array,
  real: boolean,
  rng: { gauss(): number },
): LoopBlock {
  const n = pairs.length;
  const c = () => new Float64Array(n);
  const out: LoopBlock = { n, tA: c(), tB: c(), x: c(), y: c(), z: c(), qw: c(), qx: c(), qy: c(), qz: c(), sigmaT: c(), sigmaR: c(), genuine: new Uint8Array(n) };
  const sigT = 0.03, sigR = 0.005;
  const g = () => (real ? rng.gauss() : 0);
  const qa = quat.create(), qb = quat.create(), qr = quat.create(), dq = quat.create(), d = vec3.create();
  for (let i = 0; i < n; i++) {
    const [a, b, genuine] = pairs[i]!;
    qa.set(Q.subarray(4 * a, 4 * a + 4));
    qb.set(Q.subarray(4 * b, 4 * b + 4));
    quat.conjugate(qa, qa);
    if (genuine) {
      vec3.set(d, P[3 * b]! - P[3 * a]!, P[3 * b + 1]! - P[3 * a + 1]!, P[3 * b + 2]! - P[3 * a + 2]!);
      quat.rotateVec3(d, qa, d);
      quat.multiply(qr, qa, qb);
    } else {
      // A confident wrong match: the recogniser believes the two places are the same spot.
      vec3.set(d, 0.2, -0.1, 0.05);
      quat.fromRotationVector(qr, 0, 0.05, 0);
    }
    quat.multiply(qr, qr, quat.fromRotationVector(dq, sigR * g(), sigR * g(), sigR * g()));
    if (qr[0]! < 0) quat.set(qr, -qr[0]!, -qr[1]!, -qr[2]!, -qr[3]!);
    out.tA[i] = s.t0Epoch + a + odometryClockOffset(s, a);
    out.tB[i] = s.t0Epoch + b + odometryClockOffset(s, b);
    out.x[i] = (d[0]! + sigT * g()) / s.spec.scale;
    out.y[i] = (d[1]! + sigT * g()) / s.spec.scale;
    out.z[i] = (d[2]! + sigT * g()) / s.spec.scale;
    out.qw[i] = qr[0]!;
    out.qx[i] = qr[1]!;
    out.qy[i] = qr[2]!;
    out.qz[i] = qr[3]!;
    out.sigmaT[i] = (genuine ? 0.05 : 0.04) / s.spec.scale;
    out.sigmaR[i] = 0.01;
    out.genuine[i] = genuine ? 1 : 0;
  }
  return out;
}
