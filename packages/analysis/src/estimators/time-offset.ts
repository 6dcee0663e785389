/**
 * Time offset and clock skew between the IMU and the odometry.
 *
 * What: time_offset_s = odometry timestamp − IMU timestamp of the same physical instant (s), per window and for the
 * run, and the clock skew (ppm) as the slope of the per-window offsets against time.
 * Method: cross-correlation of the gyro angular-rate magnitude with the odometry angular-rate magnitude (from
 * consecutive orientations); magnitudes do not depend on the unknown IMU–odometry rotation. Both are resampled on
 * uniform grids (gyro box-averaged over one odometry period on a 10 ms grid, odometry linearly interpolated on a 1 ms
 * grid so every lag is an index shift); the normalised correlation is searched over ±maxLag on a 10 ms lattice, then
 * at 1 ms around the best lag, and refined by a parabola through the three best points (sub-sample interpolation,
 * common practice). Uncertainty: linearised delay estimation, σ² = σ_res² / Σ ȯ², counted over independent odometry
 * samples (the Cramér–Rao form for a time delay of a known waveform; S. M. Kay, "Fundamentals of Statistical Signal
 * Processing: Estimation Theory", 1993, §3.11 example — from memory). Skew: weighted least-squares line through
 * the per-window offsets, σ inflated by √(χ²/dof) when the scatter exceeds the stated sigmas.
 */
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { emptySeries, type Unsupported, type WindowSeries } from './types.ts';

export interface TimeOffsetOptions {
  /** Largest |offset| searched, s (default 0.2). */
  maxLagS?: number;
  /** Window length, s (default 60); windows do not overlap so their errors are independent. */
  windowS?: number;
  /** Gyro bias removed before taking magnitudes, rad/s (default zero). */
  gyroBiasRadS?: ArrayLike<number>;
  /** A window needs at least this standard deviation of the gyro rate magnitude, rad/s (default 0.03). */
  minRateStdRadS?: number;
  /** A window needs at least this peak correlation coefficient (default 0.6). */
  minPeakCorrelation?: number;
}

export interface TimeOffsetResult {
  ok: true;
  /** Offset at tRef, s. */
  offsetS: number;
  offsetSigmaS: number;
  /** Reference time of the offset (IMU clock, epoch s): the weighted centre of the usable windows. */
  tRef: number;
  /** Clock skew d(offset)/dt in ppm, or null with the reason (fewer than 3 usable windows). */
  skewPpm: number | null;
  skewSigmaPpm: number | null;
  skewReason: string | null;
  /** Per-window offsets (s). */
  windows: WindowSeries;
  /** Best correlation coefficient per window. */
  peakCorrelation: Float64Array;
}

const GYRO_GRID_S = 0.01;
const ODOM_GRID_S = 0.001;

/** Offset of the odometry clock against the IMU clock; see the module comment. */
export function estimateTimeOffset(imu: ImuColumns, odom: OdometryColumns, options: TimeOffsetOptions = {}): TimeOffsetResult | Unsupported {
  const maxLag = options.maxLagS ?? 0.2;
  const windowS = options.windowS ?? 60;
  if (odom.n < 10 || imu.n < 10) return { ok: false, reason: 'insufficient: too few samples' };
  const rate = odometryRate(odom);
  const gyroMag = gyroMagnitude(imu, options.gyroBiasRadS ?? [0, 0, 0], rate.period);
  const t0 = Math.max(imu.t[0]!, odom.t[0]! + maxLag), t1 = Math.min(imu.t[imu.n - 1]!, odom.t[odom.n - 1]! - maxLag);
  if (!(t1 - t0 > 5)) return { ok: false, reason: 'insufficient: IMU and odometry overlap by less than 5 s' };
  const nw = Math.max(1, Math.floor((t1 - t0) / windowS));
  const span = (t1 - t0) / nw;
  const windows = emptySeries('s', nw);
  const peak = new Float64Array(nw);
  const scratch = createScratch(span, maxLag);
  for (let w = 0; w < nw; w++) {
    const a = t0 + w * span;
    windows.t[w] = a + span / 2;
    const r = offsetInWindow(imu, gyroMag, rate, a, a + span, maxLag, scratch, options);
    peak[w] = r.peak;
    if ('reason' in r) windows.reasons[w] = r.reason;
    else {
      windows.value[w] = r.offset;
      windows.sigma[w] = r.sigma;
    }
  }
  return combineWindows(windows, peak);
}

interface OdomRate {
  tMid: Float64Array;
  mag: Float64Array;
  period: number;
}

/** |ω| of the odometry from consecutive orientations, at interval mid-times (rad/s). */
function odometryRate(odom: OdometryColumns): OdomRate {
  const n = odom.n - 1;
  const tMid = new Float64Array(n), mag = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const dt = odom.t[k + 1]! - odom.t[k]!;
    tMid[k] = odom.t[k]! + dt / 2;
    const w = odom.qw[k]! * odom.qw[k + 1]! + odom.qx[k]! * odom.qx[k + 1]! + odom.qy[k]! * odom.qy[k + 1]! + odom.qz[k]! * odom.qz[k + 1]!;
    mag[k] = dt > 0 ? (2 * Math.acos(Math.min(1, Math.abs(w)))) / dt : 0;
  }
  return { tMid, mag, period: (odom.t[odom.n - 1]! - odom.t[0]!) / n };
}

/** |ω − b| per IMU sample, box-averaged over one odometry period (centred, so it adds no lag). */
function gyroMagnitude(imu: ImuColumns, b: ArrayLike<number>, period: number): Float64Array {
  const n = imu.n;
  const raw = new Float64Array(n + 1); // prefix sums
  const b0 = b[0]!, b1 = b[1]!, b2 = b[2]!;
  for (let i = 0; i < n; i++) {
    const x = imu.gx[i]! - b0, y = imu.gy[i]! - b1, z = imu.gz[i]! - b2;
    raw[i + 1] = raw[i]! + Math.sqrt(x * x + y * y + z * z);
  }
  const fs = (n - 1) / (imu.t[n - 1]! - imu.t[0]!);
  const half = Math.max(0, Math.round((period * fs) / 2));
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const a = Math.max(0, i - half), c = Math.min(n, i + half + 1);
    out[i] = (raw[c]! - raw[a]!) / (c - a);
  }
  return out;
}

interface Scratch {
  g: Float64Array;
  o: Float64Array;
  od: Float64Array;
}

function createScratch(span: number, maxLag: number): Scratch {
  const ng = Math.ceil(span / GYRO_GRID_S) + 2;
  const no = Math.ceil((span + 2 * maxLag + 0.1) / ODOM_GRID_S) + 2;
  return { g: new Float64Array(ng), o: new Float64Array(no), od: new Float64Array(no) };
}

/** Linear interpolation of (tx, vx) at time t with a moving cursor; returns [value, cursor]. */
function interpAt(tx: Float64Array, vx: Float64Array, n: number, t: number, cur: number): number {
  let k = cur;
  while (k + 1 < n && tx[k + 1]! <= t) k++;
  if (k + 1 >= n) return vx[n - 1]!;
  if (tx[k]! > t) return vx[k]!;
  const f = (t - tx[k]!) / (tx[k + 1]! - tx[k]!);
  return vx[k]! + f * (vx[k + 1]! - vx[k]!);
}

function cursorBefore(tx: Float64Array, n: number, t: number): number {
  let lo = 0, hi = n - 1;
  if (tx[0]! > t) return 0;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (tx[mid]! <= t) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

type WindowOffset = { offset: number; sigma: number; peak: number } | { reason: string; peak: number };

function offsetInWindow(
  imu: ImuColumns, gyroMag: Float64Array, rate: OdomRate, a: number, b: number, maxLag: number, s: Scratch, options: TimeOffsetOptions,
): WindowOffset {
  const ng = Math.floor((b - a) / GYRO_GRID_S);
  const oStart = a - maxLag - 0.05;
  const no = Math.floor((b - a + 2 * maxLag + 0.1) / ODOM_GRID_S);
  let cur = cursorBefore(imu.t, imu.n, a);
  let sg = 0, sgg = 0;
  for (let i = 0; i < ng; i++) {
    const v = interpAt(imu.t, gyroMag, imu.n, a + i * GYRO_GRID_S, cur);
    while (cur + 1 < imu.n && imu.t[cur + 1]! <= a + i * GYRO_GRID_S) cur++;
    s.g[i] = v;
    sg += v;
    sgg += v * v;
  }
  const gStd = Math.sqrt(Math.max(0, sgg / ng - (sg / ng) ** 2));
  if (gStd < (options.minRateStdRadS ?? 0.03)) return { reason: 'unobservable: too little rotation to correlate', peak: 0 };
  let oc = cursorBefore(rate.tMid, rate.mag.length, oStart);
  for (let i = 0; i < no; i++) {
    const t = oStart + i * ODOM_GRID_S;
    s.o[i] = interpAt(rate.tMid, rate.mag, rate.mag.length, t, oc);
    while (oc + 1 < rate.mag.length && rate.tMid[oc + 1]! <= t) oc++;
  }
  const ratio = Math.round(GYRO_GRID_S / ODOM_GRID_S);
  const base = Math.round((a - oStart) / ODOM_GRID_S); // odometry index of gyro grid point 0 at zero lag
  const maxMs = Math.round(maxLag / ODOM_GRID_S);
  const corr = (lag: number): number => correlation(s.g, s.o, ng, base + lag, ratio, sg, sgg);
  let best = -2, bestLag = 0;
  for (let lag = -maxMs; lag <= maxMs; lag += 10) {
    const c = corr(lag);
    if (c > best) [best, bestLag] = [c, lag];
  }
  const lo = Math.max(-maxMs + 1, bestLag - 10), hi = Math.min(maxMs - 1, bestLag + 10);
  for (let lag = lo; lag <= hi; lag++) {
    const c = corr(lag);
    if (c > best) [best, bestLag] = [c, lag];
  }
  if (best < (options.minPeakCorrelation ?? 0.6)) return { reason: 'unobservable: no distinct correlation peak', peak: best };
  if (Math.abs(bestLag) >= maxMs - 1) return { reason: 'insufficient: correlation peak at the edge of the search range', peak: best };
  const cm = corr(bestLag - 1), cp = corr(bestLag + 1);
  const den = cm - 2 * best + cp;
  const frac = den < 0 ? (0.5 * (cm - cp)) / den : 0;
  const offset = (bestLag + frac) * ODOM_GRID_S;
  const sigma = delaySigma(s, ng, base + Math.round(offset / ODOM_GRID_S), ratio, rate.period);
  return { offset, sigma, peak: best };
}

/** Pearson correlation of g[0..ng) with o[start + i·ratio]. */
function correlation(g: Float64Array, o: Float64Array, ng: number, start: number, ratio: number, sg: number, sgg: number): number {
  let so = 0, soo = 0, sgo = 0;
  for (let i = 0, j = start; i < ng; i++, j += ratio) {
    const v = o[j]!;
    so += v;
    soo += v * v;
    sgo += g[i]! * v;
  }
  const cov = sgo - (sg * so) / ng;
  const vg = sgg - (sg * sg) / ng, vo = soo - (so * so) / ng;
  return vg > 0 && vo > 0 ? cov / Math.sqrt(vg * vo) : -1;
}

/** σ of the delay: residual of o ≈ α g + β at the best lag over Σ ȯ², with one independent sample per odometry period. */
function delaySigma(s: Scratch, ng: number, start: number, ratio: number, period: number): number {
  let sg = 0, so = 0, sgg = 0, sgo = 0;
  for (let i = 0, j = start; i < ng; i++, j += ratio) {
    sg += s.g[i]!;
    so += s.o[j]!;
    sgg += s.g[i]! ** 2;
    sgo += s.g[i]! * s.o[j]!;
  }
  const alpha = (sgo - (sg * so) / ng) / (sgg - (sg * sg) / ng);
  const beta = (so - alpha * sg) / ng;
  let res = 0, slope = 0;
  for (let i = 0, j = start; i < ng; i++, j += ratio) {
    const r = s.o[j]! - alpha * s.g[i]! - beta;
    res += r * r;
    const d = (s.o[j + 1]! - s.o[j - 1]!) / (2 * ODOM_GRID_S);
    slope += d * d;
  }
  const independent = Math.min(1, GYRO_GRID_S / period); // grid points per independent odometry sample
  return Math.sqrt(res / ng / (slope * independent));
}

function combineWindows(windows: WindowSeries, peak: Float64Array): TimeOffsetResult | Unsupported {
  let sw = 0, st = 0, sy = 0, stt = 0, sty = 0, m = 0;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    const wt = 1 / windows.sigma[w]! ** 2, t = windows.t[w]!;
    sw += wt;
    st += wt * t;
    sy += wt * y;
    m++;
  }
  if (m === 0) return { ok: false, reason: windows.reasons.find((r) => r !== '') ?? 'unobservable: no usable window' };
  const tRef = st / sw;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    const wt = 1 / windows.sigma[w]! ** 2, dt = windows.t[w]! - tRef;
    stt += wt * dt * dt;
    sty += wt * dt * y;
  }
  const mean = sy / sw;
  const slope = m >= 3 && stt > 0 ? sty / stt : 0;
  let chi2 = 0;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    chi2 += (y - mean - slope * (windows.t[w]! - tRef)) ** 2 / windows.sigma[w]! ** 2;
  }
  const dof = m - (m >= 3 ? 2 : 1);
  const inflate = dof > 0 ? Math.sqrt(Math.max(1, chi2 / dof)) : 1;
  const base = { ok: true as const, offsetS: mean, offsetSigmaS: inflate / Math.sqrt(sw), tRef, windows, peakCorrelation: peak };
  if (m < 3) return { ...base, skewPpm: null, skewSigmaPpm: null, skewReason: 'insufficient: fewer than 3 usable windows' };
  return { ...base, skewPpm: slope * 1e6, skewSigmaPpm: (inflate / Math.sqrt(stt)) * 1e6, skewReason: null };
}
