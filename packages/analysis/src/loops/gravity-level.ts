import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import type { RunManifest } from '@plumbline/contracts';
import { pose, PoseInterpolator, quat } from '@plumbline/geometry';

/**
 * Direction of "up" in the odometry world frame from the accelerometer at rest (static levelling): at rest the
 * specific force is +g·up in the IMU frame, so up_world ∝ R_world←odom · R_odom←imu · f̄ averaged over the stationary
 * intervals (each weighted by its samples). Units: unit vector, odometry world frame. Method: coarse levelling of
 * strapdown alignment (D. Titterton & J. Weston, "Strapdown Inertial Navigation Technology", 2nd ed., 2004, §10.2).
 * Null without a stationary interval inside the odometry span.
 */
export function levelUpInOdomWorld(
  imu: ImuColumns, odo: OdometryColumns, stationary: ReadonlyArray<{ tStart: number; tEnd: number }>, manifest: RunManifest,
): Float64Array | null {
  const qIo = manifest.extrinsics.imu_T_odom.rotation_wxyz;
  const qOdomImu = quat.conjugate(quat.create(), Float64Array.of(qIo[0], qIo[1], qIo[2], qIo[3]));
  quat.normalize(qOdomImu, qOdomImu);
  const interp = new PoseInterpolator(odo), p = pose.create(), f = new Float64Array(3), up = new Float64Array(3);
  let i = 0, weight = 0;
  for (const r of stationary) {
    f.fill(0);
    let m = 0;
    while (i < imu.n && imu.t[i]! < r.tStart) i++;
    for (; i < imu.n && imu.t[i]! <= r.tEnd; i++, m++) {
      f[0] = f[0]! + imu.ax[i]!;
      f[1] = f[1]! + imu.ay[i]!;
      f[2] = f[2]! + imu.az[i]!;
    }
    if (m === 0 || !interp.at(p, (r.tStart + r.tEnd) / 2)) continue;
    quat.rotateVec3(f, qOdomImu, f);
    quat.rotateVec3(f, p.q, f);
    for (let k = 0; k < 3; k++) up[k] = up[k]! + f[k]!;
    weight += m;
  }
  const norm = Math.hypot(up[0]!, up[1]!, up[2]!);
  if (weight === 0 || !(norm > 0)) return null;
  return up.map((v) => v / norm);
}

/**
 * Rotation (unit quaternion) of the odometry world that turns `up` onto +z by `angleDeg` about the horizontal axis
 * up × ẑ (the axis from levelling, the angle from the inertial estimate so the correction matches the reported tilt).
 */
export function gravityCorrection(up: Float64Array, angleDeg: number): Float64Array | null {
  const ax = up[1]!, ay = -up[0]!; // up × ẑ = (up_y, −up_x, 0)
  const s = Math.hypot(ax, ay);
  if (!(s > 1e-12)) return null;
  const a = (angleDeg * Math.PI) / 180;
  return quat.fromRotationVector(quat.create(), (ax / s) * a, (ay / s) * a, 0);
}
