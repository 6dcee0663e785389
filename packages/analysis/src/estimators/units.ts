/**
 * Units sanity of the IMU stream against physics and against the odometry.
 * - Specific force at rest has magnitude |g| (local normal gravity): the ratio is ≈ 1 for m/s² and ≈ 1/9.80665 ≈ 0.102
 *   when the accelerometer was written in g.
 * - Gyro rotation accumulated over intervals where the odometry turns, divided by the odometry's rotation: ≈ 1 for
 *   rad/s and ≈ 180/π ≈ 57.3 when the gyro was written in deg/s.
 * Method: direct ratios (common practice); gravity from the WGS-84 normal gravity formula (NIMA TR8350.2).
 */
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { medianOf } from './small-math.ts';
import type { TimeInterval } from './types.ts';

export interface UnitsCheck {
  /** |specific force| at rest / local normal gravity; null when the run has no usable samples. */
  accelRestRatio: number | null;
  /** Where the rest ratio came from: stationary intervals, or 1-s means over the whole run when it never stops. */
  accelRestSource: 'stationary' | 'run-mean' | null;
  /** Σ gyro rotation / Σ odometry rotation over turning intervals; null when the odometry turns less than 1 rad in total. */
  gyroOdometryRateRatio: number | null;
}

export function checkUnits(
  imu: ImuColumns, odom: OdometryColumns, stationary: readonly TimeInterval[], gravityMS2: number, timeOffsetS = 0,
): UnitsCheck {
  const rest = accelRestRatio(imu, stationary, gravityMS2);
  return { ...rest, gyroOdometryRateRatio: gyroRatio(imu, odom, timeOffsetS) };
}

function accelRestRatio(imu: ImuColumns, stationary: readonly TimeInterval[], g: number): Pick<UnitsCheck, 'accelRestRatio' | 'accelRestSource'> {
  const means: number[] = [];
  const blockMean = (i0: number, i1: number): number => {
    let sx = 0, sy = 0, sz = 0;
    for (let i = i0; i < i1; i++) {
      sx += imu.ax[i]!;
      sy += imu.ay[i]!;
      sz += imu.az[i]!;
    }
    const m = i1 - i0;
    return Math.hypot(sx / m, sy / m, sz / m);
  };
  let i = 0;
  for (const s of stationary) {
    while (i < imu.n && imu.t[i]! < s.tStart) i++;
    const i0 = i;
    while (i < imu.n && imu.t[i]! <= s.tEnd) i++;
    if (i - i0 >= 10) means.push(blockMean(i0, i));
  }
  if (means.length > 0) return { accelRestRatio: medianOf(means) / g, accelRestSource: 'stationary' };
  // Never at rest: over 1-s blocks a ground vehicle's mean acceleration is small against gravity.
  i = 0;
  while (i < imu.n) {
    const i0 = i, tEnd = imu.t[i]! + 1;
    while (i < imu.n && imu.t[i]! < tEnd) i++;
    if (i - i0 >= 10) means.push(blockMean(i0, i));
  }
  if (means.length === 0) return { accelRestRatio: null, accelRestSource: null };
  return { accelRestRatio: medianOf(means) / g, accelRestSource: 'run-mean' };
}

function gyroRatio(imu: ImuColumns, odom: OdometryColumns, offset: number): number | null {
  let sumOdom = 0, sumGyro = 0;
  let j = 0;
  for (let k = 0; k + 1 < odom.n; k++) {
    const dt = odom.t[k + 1]! - odom.t[k]!;
    if (!(dt > 0) || dt > 0.5) continue;
    const dot = Math.abs(odom.qw[k]! * odom.qw[k + 1]! + odom.qx[k]! * odom.qx[k + 1]! + odom.qy[k]! * odom.qy[k + 1]! + odom.qz[k]! * odom.qz[k + 1]!);
    const ang = 2 * Math.acos(Math.min(1, dot));
    if (ang / dt < 0.1) continue; // turning intervals only: bias and noise dominate slow rotation
    const ta = odom.t[k]! - offset, tb = odom.t[k + 1]! - offset;
    while (j < imu.n && imu.t[j]! < ta) j++;
    let s = 0, m = 0;
    for (let i = j; i < imu.n && imu.t[i]! < tb; i++) {
      s += Math.sqrt(imu.gx[i]! ** 2 + imu.gy[i]! ** 2 + imu.gz[i]! ** 2);
      m++;
    }
    if (m === 0) continue;
    sumGyro += (s / m) * dt;
    sumOdom += ang;
  }
  return sumOdom >= 1 ? sumGyro / sumOdom : null;
}
