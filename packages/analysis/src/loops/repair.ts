import type { OdometryColumns } from '@plumbline/bundle';
import { pose, quat, so3 } from '@plumbline/geometry';
import type { PoseGraph } from './pose-graph.ts';

export interface RepairInput {
  odometry: OdometryColumns;
  /** Odometry indices of the graph nodes, ascending. */
  keyframes: Int32Array;
  /** Optimised graph (node k ↔ keyframes[k]); null = no pose-graph correction. */
  optimised: PoseGraph | null;
  /** Factor turning odometry units into metres; null = 1 (not applied). */
  scale: number | null;
  /** Rotation of the odometry world that brings the estimated gravity onto −z; null = identity (not applied). */
  gravityRotation: Float64Array | null;
}

export interface RepairedTrajectory {
  columns: OdometryColumns;
  /** Largest and mean position change of the pose-graph correction alone, odometry units. */
  maxShift: number;
  meanShift: number;
  scaleApplied: number | null;
  gravityRotationDeg: number | null;
}

function optimisedNode(out: pose.Pose, g: PoseGraph, k: number, odoPose: pose.Pose, R: Float64Array): pose.Pose {
  if (g.mode === 'se3') {
    for (let a = 0; a < 9; a++) R[a] = g.R[k * 9 + a]!;
    so3.toQuat(out.q, R);
    out.t.set(g.t.subarray(k * 3, k * 3 + 3));
    return out;
  }
  // Planar: the graph moved x, y and yaw; keep the odometry's height, roll and pitch.
  const q = odoPose.q;
  const yawOdo = Math.atan2(2 * (q[0]! * q[3]! + q[1]! * q[2]!), 1 - 2 * (q[2]! * q[2]! + q[3]! * q[3]!));
  const dYaw = g.s[k * 3 + 2]! - yawOdo;
  const qz = quat.fromRotationVector(quat.create(), 0, 0, dYaw);
  quat.multiply(out.q, qz, q);
  out.t[0] = g.s[k * 3]!;
  out.t[1] = g.s[k * 3 + 1]!;
  out.t[2] = odoPose.t[2]!;
  return out;
}

/**
 * The repaired trajectory at every odometry pose: the pose-graph correction C_k = T_opt,k ∘ T_odo,k⁻¹ of the
 * bracketing keyframes, interpolated in time (slerp/lerp), applied to the odometry pose; then the whole trajectory
 * is rotated by the gravity correction and scaled to metres. Applying the similarity after the graph correction is
 * the same as applying it first with a correspondingly transformed correction (a similarity commutes with the
 * relative-pose structure of the graph up to that transform). O(n), no per-pose allocation.
 */
export function repairTrajectory(input: RepairInput): RepairedTrajectory {
  const { odometry: odo, keyframes: kf, optimised: g } = input;
  const n = odo.n, f = () => new Float64Array(n);
  const out: OdometryColumns = { n, t: Float64Array.from(odo.t.subarray(0, n)), x: f(), y: f(), z: f(), qw: f(), qx: f(), qy: f(), qz: f(), quality: null };
  const s = input.scale ?? 1, qg = input.gravityRotation ?? quat.identity(quat.create());
  const Ca = pose.create(), Cb = pose.create(), C = pose.create(), P = pose.create(), tmp = pose.create(), inv = pose.create();
  const R = new Float64Array(9), v = new Float64Array(3);
  let k = 0, maxShift = 0, sumShift = 0;
  const correctionAt = (out2: pose.Pose, node: number) => {
    pose.fromColumns(P, odo, kf[node]!);
    optimisedNode(tmp, g!, node, P, R);
    return pose.compose(out2, tmp, pose.invert(inv, P));
  };
  if (g && kf.length >= 2) {
    correctionAt(Ca, 0);
    correctionAt(Cb, 1);
  }
  for (let i = 0; i < n; i++) {
    pose.fromColumns(P, odo, i);
    if (g && kf.length >= 2) {
      while (k + 2 < kf.length && kf[k + 1]! <= i) {
        k++;
        pose.copy(Ca, Cb);
        correctionAt(Cb, k + 1);
      }
      const ta = odo.t[kf[k]!]!, tb = odo.t[kf[k + 1]!]!;
      const fr = tb > ta ? Math.min(1, Math.max(0, (odo.t[i]! - ta) / (tb - ta))) : 0;
      pose.interpolate(C, Ca, Cb, fr);
      pose.compose(tmp, C, P);
      const shift = Math.hypot(tmp.t[0]! - P.t[0]!, tmp.t[1]! - P.t[1]!, tmp.t[2]! - P.t[2]!);
      maxShift = Math.max(maxShift, shift);
      sumShift += shift;
      pose.copy(P, tmp);
    }
    quat.rotateVec3(v, qg, P.t);
    quat.multiply(P.q, qg, P.q);
    out.x[i] = s * v[0]!;
    out.y[i] = s * v[1]!;
    out.z[i] = s * v[2]!;
    out.qw[i] = P.q[0]!;
    out.qx[i] = P.q[1]!;
    out.qy[i] = P.q[2]!;
    out.qz[i] = P.q[3]!;
  }
  return {
    columns: out, maxShift, meanShift: n > 0 ? sumShift / n : 0,
    scaleApplied: input.scale, gravityRotationDeg: input.gravityRotation ? (quat.angle(input.gravityRotation) * 180) / Math.PI : null,
  };
}

/**
 * The trajectory as CSV text in the odometry format (`t,x,y,z,qw,qx,qy,qz`, see docs/bundle-format.md): time with
 * 6 decimals (µs), positions with 4 (0.1 mm), quaternions with 9. Deterministic for equal input.
 */
export function trajectoryCsv(c: OdometryColumns): string {
  const lines: string[] = ['t,x,y,z,qw,qx,qy,qz'];
  for (let i = 0; i < c.n; i++) {
    lines.push(
      `${c.t[i]!.toFixed(6)},${c.x[i]!.toFixed(4)},${c.y[i]!.toFixed(4)},${c.z[i]!.toFixed(4)},` +
        `${c.qw[i]!.toFixed(9)},${c.qx[i]!.toFixed(9)},${c.qy[i]!.toFixed(9)},${c.qz[i]!.toFixed(9)}`,
    );
  }
  return `${lines.join('\n')}\n`;
}
