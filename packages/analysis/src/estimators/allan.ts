/**
 * Allan deviation and white-noise densities of the gyro and accelerometer over stationary intervals.
 *
 * What: the overlapping Allan deviation σ(τ) per axis (rad/s or m/s²) and the noise density N (rad/s/√Hz,
 * m/s²/√Hz) read on the −½ slope as N = σ(τ)·√τ, i.e. σ(1 s) extrapolated along the white-noise line.
 * Method: IEEE Std 952-1997, Annex C (overlapping estimator σ²(τ) = Σ (θ_{k+2m} − 2θ_{k+m} + θ_k)² / (2τ²(N − 2m)),
 * θ the integrated rate), Allan variances of several stationary intervals pooled by their term counts; N fitted with
 * the slope fixed at −½ over τ from 2τ0 to min(1 s, T/8) (the τ range is returned), which stays below the bias
 * instability corner of consumer MEMS.
 */
import type { ImuColumns } from '@plumbline/bundle';
import { noScalar, scalar, type ScalarResult, type TimeInterval } from './types.ts';

/** Overlapping Allan variance of rate samples x[i0..i1) at cluster sizes m (τ = m·τ0): returns sums and term counts. */
export function allanSums(x: Float64Array, i0: number, i1: number, tau0: number, ms: readonly number[], sums: Float64Array, counts: Float64Array): void {
  const n = i1 - i0;
  const theta = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) theta[i + 1] = theta[i]! + x[i0 + i]! * tau0;
  ms.forEach((m, j) => {
    const terms = n + 1 - 2 * m;
    if (terms < 1) return;
    const tau = m * tau0;
    let s = 0;
    for (let k = 0; k < terms; k++) {
      const d = theta[k + 2 * m]! - 2 * theta[k + m]! + theta[k]!;
      s += d * d;
    }
    sums[j] = sums[j]! + s / (2 * tau * tau);
    counts[j] = counts[j]! + terms;
  });
}

/** Allan deviation of one series (helper for tests and plots). */
export function allanDeviation(x: Float64Array, tau0: number, ms: readonly number[]): Float64Array {
  const sums = new Float64Array(ms.length), counts = new Float64Array(ms.length);
  allanSums(x, 0, x.length, tau0, ms, sums, counts);
  return Float64Array.from(sums, (s, j) => (counts[j]! > 0 ? Math.sqrt(s / counts[j]!) : Number.NaN));
}

export interface NoiseDensityResult {
  gyroNoiseDensity: ScalarResult;
  accelNoiseDensity: ScalarResult;
  /** τ values (s) used for the fit, and the pooled Allan deviation per axis at each (gx, gy, gz, ax, ay, az rows). */
  tau: Float64Array;
  adev: Float64Array[];
  /** Manifest / estimated ratios when the manifest states densities. */
  gyroRatioToManifest: number | null;
  accelRatioToManifest: number | null;
}

/** See the module comment. `minIntervalS`: shortest stationary interval used (default 4 s). */
export function estimateNoiseDensities(
  imu: ImuColumns, stationary: readonly TimeInterval[], manifest: { gyro?: number; accel?: number }, minIntervalS = 4,
): NoiseDensityResult {
  const usable = stationary.filter((s) => s.tEnd - s.tStart >= minIntervalS);
  const none = (reason: string): NoiseDensityResult => ({
    gyroNoiseDensity: noScalar('rad/s/√Hz', reason), accelNoiseDensity: noScalar('m/s²/√Hz', reason),
    tau: new Float64Array(0), adev: [], gyroRatioToManifest: null, accelRatioToManifest: null,
  });
  if (usable.length === 0 || imu.n < 2) return none(`insufficient: no stationary interval of ${minIntervalS} s or more`);
  const tau0 = (imu.t[imu.n - 1]! - imu.t[0]!) / (imu.n - 1);
  const longest = Math.max(...usable.map((s) => s.tEnd - s.tStart));
  const tauMax = Math.min(1, longest / 8);
  const ms: number[] = [];
  for (let m = 2; m * tau0 <= tauMax; m = Math.max(m + 1, Math.round(m * 1.4))) ms.push(m);
  if (ms.length < 3) return none('insufficient: stationary intervals too short for an Allan deviation');
  // Sample ranges of the intervals, found once for all six axes.
  const ranges: [number, number][] = [];
  let i = 0;
  for (const s of usable) {
    while (i < imu.n && imu.t[i]! < s.tStart) i++;
    const i0 = i;
    while (i < imu.n && imu.t[i]! <= s.tEnd) i++;
    ranges.push([i0, i]);
  }
  const cols = [imu.gx, imu.gy, imu.gz, imu.ax, imu.ay, imu.az];
  const adev = cols.map((col) => {
    const sums = new Float64Array(ms.length), counts = new Float64Array(ms.length);
    for (const [i0, i1] of ranges) allanSums(col, i0, i1, tau0, ms, sums, counts);
    return Float64Array.from(sums, (v, j) => Math.sqrt(v / counts[j]!));
  });
  const tau = Float64Array.from(ms, (m) => m * tau0);
  // Slope fixed at −½: log N = mean(log σ + ½ log τ); axes pooled in quadrature (isotropic density).
  const density = (axes: Float64Array[]): number => {
    let s = 0;
    for (const a of axes) {
      let l = 0;
      for (let j = 0; j < ms.length; j++) l += Math.log(a[j]!) + 0.5 * Math.log(tau[j]!);
      s += Math.exp((2 * l) / ms.length);
    }
    return Math.sqrt(s / axes.length);
  };
  const ng = density(adev.slice(0, 3)), na = density(adev.slice(3));
  // A white-noise σ(τ) from K independent clusters has relative sd ≈ 1/√(2K) (IEEE 952 Annex C); use the largest τ's.
  const kMin = Math.max(1, (usable.reduce((a, s) => a + s.tEnd - s.tStart, 0) / tau[tau.length - 1]!) * 3);
  const rel = 1 / Math.sqrt(2 * kMin);
  return {
    gyroNoiseDensity: scalar(ng, ng * rel, 'rad/s/√Hz'),
    accelNoiseDensity: scalar(na, na * rel, 'm/s²/√Hz'),
    tau, adev,
    gyroRatioToManifest: manifest.gyro ? ng / manifest.gyro : null,
    accelRatioToManifest: manifest.accel ? na / manifest.accel : null,
  };
}
