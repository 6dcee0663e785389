/**
 * Keyframes: odometry samples picked about every `spacingS` seconds, with their times mapped onto the IMU clock
 * (t_imu = t_odom − offset(t_odom), offset = odometry − IMU stamp of the same instant, possibly drifting linearly).
 */
import type { OdometryColumns } from '@plumbline/bundle';

export interface Keyframes {
  n: number;
  /** Odometry sample index of each keyframe. */
  index: Int32Array;
  tOdom: Float64Array;
  tImu: Float64Array;
  /** Odometry positions (odometry world, odometry units), stride 3. */
  p: Float64Array;
  /** Odometry orientations R_WB, quaternions w-first, stride 4. */
  q: Float64Array;
  /** Path length along the odometry up to each keyframe, odometry units. */
  distance: Float64Array;
}

export interface ClockModel {
  /** Offset (s) at tRef (IMU clock). */
  offsetS: number;
  /** d(offset)/dt, dimensionless (ppm × 1e-6). */
  skew: number;
  tRef: number;
}

export const NO_CLOCK_OFFSET: ClockModel = { offsetS: 0, skew: 0, tRef: 0 };

/** Maps an odometry stamp to the IMU clock under a linear clock model (solved exactly for t_imu). */
export function odomToImuTime(tOdom: number, c: ClockModel): number {
  // t_odom = t_imu + o + k (t_imu − tRef)  ⇒  t_imu = (t_odom − o + k tRef) / (1 + k)
  return (tOdom - c.offsetS + c.skew * c.tRef) / (1 + c.skew);
}

export function selectKeyframes(odom: OdometryColumns, spacingS: number, clock: ClockModel = NO_CLOCK_OFFSET): Keyframes {
  const pick: number[] = [];
  let last = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < odom.n; i++) {
    if (odom.t[i]! - last >= spacingS - 1e-6) {
      pick.push(i);
      last = odom.t[i]!;
    }
  }
  const n = pick.length;
  const kf: Keyframes = {
    n, index: Int32Array.from(pick), tOdom: new Float64Array(n), tImu: new Float64Array(n),
    p: new Float64Array(3 * n), q: new Float64Array(4 * n), distance: new Float64Array(n),
  };
  let dist = 0, prev = 0;
  for (let k = 0; k < n; k++) {
    const i = pick[k]!;
    for (let j = prev + 1; j <= i; j++) {
      // sqrt of the sum rather than Math.hypot (several times slower in V8; pose steps never approach overflow)
      const dx = odom.x[j]! - odom.x[j - 1]!, dy = odom.y[j]! - odom.y[j - 1]!, dz = odom.z[j]! - odom.z[j - 1]!;
      dist += Math.sqrt(dx * dx + dy * dy + dz * dz);
    }
    prev = i;
    kf.distance[k] = dist;
    kf.tOdom[k] = odom.t[i]!;
    kf.tImu[k] = odomToImuTime(odom.t[i]!, clock);
    kf.p[3 * k] = odom.x[i]!;
    kf.p[3 * k + 1] = odom.y[i]!;
    kf.p[3 * k + 2] = odom.z[i]!;
    kf.q[4 * k] = odom.qw[i]!;
    kf.q[4 * k + 1] = odom.qx[i]!;
    kf.q[4 * k + 2] = odom.qy[i]!;
    kf.q[4 * k + 3] = odom.qz[i]!;
  }
  return kf;
}
