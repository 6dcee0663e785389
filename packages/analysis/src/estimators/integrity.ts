/**
 * Per-stream integrity of the inertial inputs: timing (rate, gaps, duplicate and non-monotonic timestamps), non-finite
 * values, saturation runs and stationary intervals. All passes are O(n) over the columns, without per-sample allocation.
 * Units sanity checks live in units.ts.
 */
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { lastAtOrBefore } from './preintegration.ts';
import type { TimeInterval } from './types.ts';

export interface StreamTiming {
  samples: number;
  nominalRateHz: number | null;
  measuredRateHz: number | null;
  tFirst: number | null;
  tLast: number | null;
  /** Spacings above 3 nominal periods, as [last sample before, first sample after]. */
  gaps: TimeInterval[];
  duplicateTimestamps: number;
  nonMonotonicTimestamps: number;
  nonFiniteValues: number;
}

/**
 * Timing of one stream. The nominal period is 1/nominalRateHz when the manifest gives it, else the median spacing.
 * Method: direct count (common practice); a gap is a spacing above 3 nominal periods (project convention).
 */
export function checkTiming(t: Float64Array, n: number, nominalRateHz: number | null, values: readonly Float64Array[]): StreamTiming {
  let nonFinite = 0;
  for (const col of values) for (let i = 0; i < n; i++) if (!Number.isFinite(col[i]!)) nonFinite++;
  return timingOf(t, n, nominalRateHz, nonFinite);
}

/** checkTiming with the non-finite count of the value columns already known. */
function timingOf(t: Float64Array, n: number, nominalRateHz: number | null, nonFiniteValues: number): StreamTiming {
  let duplicates = 0, backwards = 0, nonFinite = nonFiniteValues;
  for (let i = 0; i < n; i++) if (!Number.isFinite(t[i]!)) nonFinite++;
  if (n < 2) {
    return { samples: n, nominalRateHz, measuredRateHz: null, tFirst: n ? t[0]! : null, tLast: n ? t[n - 1]! : null, gaps: [], duplicateTimestamps: 0, nonMonotonicTimestamps: 0, nonFiniteValues: nonFinite };
  }
  const period = nominalRateHz !== null ? 1 / nominalRateHz : medianSpacing(t, n);
  const gaps: TimeInterval[] = [];
  for (let i = 1; i < n; i++) {
    const d = t[i]! - t[i - 1]!;
    if (d === 0) duplicates++;
    else if (d < 0) backwards++;
    else if (d > 3 * period) gaps.push({ tStart: t[i - 1]!, tEnd: t[i]! });
  }
  const span = t[n - 1]! - t[0]!;
  return {
    samples: n, nominalRateHz: nominalRateHz ?? (period > 0 ? 1 / period : null),
    measuredRateHz: span > 0 ? (n - 1) / span : null, tFirst: t[0]!, tLast: t[n - 1]!,
    gaps, duplicateTimestamps: duplicates, nonMonotonicTimestamps: backwards, nonFiniteValues: nonFinite,
  };
}

function medianSpacing(t: Float64Array, n: number): number {
  const m = Math.min(n - 1, 4001);
  const d = new Float64Array(m);
  for (let i = 0; i < m; i++) d[i] = t[i + 1]! - t[i]!;
  d.sort();
  return d[m >> 1]!;
}

export interface SaturationRun extends TimeInterval {
  axis: 'gx' | 'gy' | 'gz' | 'ax' | 'ay' | 'az';
  samples: number;
}

const AXES = ['gx', 'gy', 'gz', 'ax', 'ay', 'az'] as const;

/**
 * Runs of samples pinned at the sensor range limit, per axis. With a known range (manifest), a sample within 0.1 % below
 * to 1 % above ±range is pinned (a few codes of slack for the converter's full scale). A sample well beyond the range
 * cannot come from the sensor: it means the stream's unit or the declared range is wrong, which the units check
 * reports, so it is not counted as clipping. Without it, the axis's largest |value| counts as the limit only where it repeats exactly over at
 * least 3 consecutive samples (a clipped sensor repeats its limit code; real motion does not). Common practice.
 */
export function findSaturation(imu: ImuColumns, gyroRangeRadS: number | null, accelRangeMS2: number | null): SaturationRun[] {
  return createSaturationScan(imu, gyroRangeRadS, accelRangeMS2).finish().runs;
}

/**
 * IMU timing (checkTiming), saturation runs (findSaturation) and stationary intervals (findStationary) with each IMU
 * column read once: the saturation scan and the non-finite count run block by block right after the stationary test
 * has read the block. The same results as the three calls.
 */
export function checkImu(
  imu: ImuColumns, odom: OdometryColumns | null, nominalRateHz: number | null, gyroRangeRadS: number | null, accelRangeMS2: number | null,
  gyroDensity: number, accelDensity: number,
): { timing: StreamTiming; saturation: SaturationRun[]; stationary: TimeInterval[] } {
  const scan = createSaturationScan(imu, gyroRangeRadS, accelRangeMS2);
  const stationary = stationaryBlocks(imu, odom, gyroDensity, accelDensity, {}, scan);
  const { runs, nonFinite } = scan.finish();
  return { timing: timingOf(imu.t, imu.n, nominalRateHz, nonFinite), saturation: runs, stationary };
}

interface AxisScan {
  axis: SaturationRun['axis'];
  index: number;
  col: Float64Array;
  limit: number;
  ceiling: number;
  minRun: number;
  /** Without a declared range the limit is the largest |value|, matched exactly. */
  exact: boolean;
  /** False when the axis has no limit to look for (all zero). */
  active: boolean;
  /** First sample of the current pinned run, −1 when none. */
  start: number;
}

/**
 * Saturation runs of the six axes over consecutive sample ranges [i0, i1) (see findSaturation), counting the
 * non-finite values on the way; `finish` scans what is left and returns the runs in findSaturation's order.
 */
function createSaturationScan(imu: ImuColumns, gyroRangeRadS: number | null, accelRangeMS2: number | null) {
  const n = imu.n, t = imu.t, runs: (SaturationRun & { index: number })[] = [];
  let nonFinite = 0, next = 0;
  const axes: AxisScan[] = AXES.map((axis, index) => {
    const col = imu[axis], range = axis[0] === 'g' ? gyroRangeRadS : accelRangeMS2;
    if (range !== null) return { axis, index, col, limit: range * 0.999, ceiling: range * 1.01, minRun: 1, exact: false, active: true, start: -1 };
    // No declared range: one pass for the largest |value| (and the non-finite count) first.
    let limit = 0;
    for (let i = 0; i < n; i++) {
      const v = col[i]!, a = Math.abs(v);
      if (!Number.isFinite(v)) nonFinite++;
      if (a > limit) limit = a;
    }
    return { axis, index, col, limit, ceiling: Number.POSITIVE_INFINITY, minRun: 3, exact: true, active: limit > 0, start: -1 };
  });
  const close = (ax: AxisScan, end: number): void => {
    if (end - ax.start >= ax.minRun) runs.push({ axis: ax.axis, index: ax.index, tStart: t[ax.start]!, tEnd: t[end - 1]!, samples: end - ax.start });
    ax.start = -1;
  };
  const scanAxis = (ax: AxisScan, i0: number, i1: number): void => {
    const { col, limit, ceiling, exact } = ax;
    let start = ax.start, bad = 0;
    for (let i = i0; i < i1; i++) {
      const v = col[i]!, a = Math.abs(v);
      if (!exact && !Number.isFinite(v)) bad++;
      if (exact ? a === limit : a >= limit && a <= ceiling) {
        if (start < 0) start = i;
      } else if (start >= 0) {
        ax.start = start;
        close(ax, i);
        start = -1;
      }
    }
    ax.start = start;
    nonFinite += bad;
  };
  return {
    scan(i0: number, i1: number): void {
      if (i0 !== next) throw new RangeError('saturation scan: ranges must be consecutive');
      for (const ax of axes) if (ax.active) scanAxis(ax, i0, i1);
      next = i1;
    },
    finish(): { runs: SaturationRun[]; nonFinite: number } {
      for (const ax of axes) {
        if (!ax.active) continue;
        scanAxis(ax, next, n);
        if (ax.start >= 0) close(ax, n);
      }
      next = n;
      // findSaturation's order: by start time, axes in AXES order on ties.
      runs.sort((a, b) => a.tStart - b.tStart || a.index - b.index);
      return { runs: runs.map(({ index: _index, ...r }) => r), nonFinite };
    },
  };
}

type SaturationScan = ReturnType<typeof createSaturationScan>;

export interface StationaryOptions {
  /** Block length for the variance test, s (default 0.25). */
  blockS?: number;
  /** Shortest interval reported, s (default 1). */
  minDurationS?: number;
  /** Largest per-axis gyro standard deviation in a quiet block, rad/s. */
  gyroStdMaxRadS?: number;
  /** Largest per-axis accelerometer standard deviation in a quiet block, m/s². */
  accelStdMaxMS2?: number;
}

/**
 * Stationary intervals: consecutive blocks whose per-axis gyro and accelerometer standard deviations are below the
 * thresholds, whose mean rate is below 0.05 rad/s, and (when odometry is given) where the odometry moved less than
 * 1 cm and 0.5° across the block — the IMU alone cannot tell rest from constant velocity. Method: block variance
 * test (zero-velocity detection, common practice). Defaults scale with the noise densities: 5·N·√fs, floored.
 */
export function findStationary(
  imu: ImuColumns, odom: OdometryColumns | null, gyroDensity: number, accelDensity: number, options: StationaryOptions = {},
): TimeInterval[] {
  return stationaryBlocks(imu, odom, gyroDensity, accelDensity, options, null);
}

/** findStationary; each block's sample range also goes to the saturation scan, if any, while it is in cache. */
function stationaryBlocks(
  imu: ImuColumns, odom: OdometryColumns | null, gyroDensity: number, accelDensity: number, options: StationaryOptions,
  scan: SaturationScan | null,
): TimeInterval[] {
  const n = imu.n;
  if (n < 10) return [];
  const fs = 1 / medianSpacing(imu.t, n);
  const gMax = options.gyroStdMaxRadS ?? Math.max(5 * gyroDensity * Math.sqrt(fs), 0.004);
  const aMax = options.accelStdMaxMS2 ?? Math.max(5 * accelDensity * Math.sqrt(fs), 0.03);
  const blockS = options.blockS ?? 0.25;
  const minDur = options.minDurationS ?? 1;
  const cols = [imu.gx, imu.gy, imu.gz, imu.ax, imu.ay, imu.az];
  const sum = new Float64Array(6), sq = new Float64Array(6);
  const out: TimeInterval[] = [];
  let runStart = Number.NaN, runEnd = Number.NaN;
  let i = 0;
  while (i < n) {
    const b0 = i, tb = imu.t[i]! + blockS;
    sum.fill(0);
    sq.fill(0);
    while (i < n && imu.t[i]! < tb) {
      for (let c = 0; c < 6; c++) {
        const v = cols[c]![i]!;
        sum[c] = sum[c]! + v;
        sq[c] = sq[c]! + v * v;
      }
      i++;
    }
    scan?.scan(b0, i);
    const m = i - b0;
    let quiet = m >= 4;
    for (let c = 0; c < 6 && quiet; c++) {
      const mean = sum[c]! / m;
      const sd = Math.sqrt(Math.max(0, sq[c]! / m - mean * mean));
      if (sd > (c < 3 ? gMax : aMax) || (c < 3 && Math.abs(mean) > 0.05)) quiet = false;
    }
    const t0 = imu.t[b0]!, t1 = imu.t[i - 1]!;
    if (quiet && odom !== null) quiet = odometryStill(odom, t0, t1);
    if (quiet) {
      if (Number.isNaN(runStart)) runStart = t0;
      runEnd = t1;
    }
    if ((!quiet || i >= n) && !Number.isNaN(runStart)) {
      if (runEnd - runStart >= minDur) out.push({ tStart: runStart, tEnd: runEnd });
      runStart = Number.NaN;
    }
  }
  return out;
}

function odometryStill(odom: OdometryColumns, t0: number, t1: number): boolean {
  const a = lastAtOrBefore(odom.t, odom.n, t0);
  const b = lastAtOrBefore(odom.t, odom.n, t1);
  if (a < 0 || b < 0 || b + 1 >= odom.n) return true; // no odometry here: decide on the IMU alone
  const d = Math.hypot(odom.x[b]! - odom.x[a]!, odom.y[b]! - odom.y[a]!, odom.z[b]! - odom.z[a]!);
  const dot = Math.abs(odom.qw[a]! * odom.qw[b]! + odom.qx[a]! * odom.qx[b]! + odom.qy[a]! * odom.qy[b]! + odom.qz[a]! * odom.qz[b]!);
  return d < 0.01 && 2 * Math.acos(Math.min(1, dot)) < (0.5 * Math.PI) / 180;
}
