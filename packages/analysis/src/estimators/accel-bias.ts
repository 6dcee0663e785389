/**
 * Accelerometer bias.
 *
 * What: ba (m/s², IMU frame) with its 1-sigma per axis, or the reason it is unobservable.
 * Method: two sources, combined by inverse-variance weighting per axis when both exist.
 * 1. Stationary intervals at several orientations: at rest |f − ba| = |g|, a sphere of known radius; Gauss–Newton
 *    on ba over the mean specific force of each interval (the multi-position calibration of e.g. Z. F. Syed et al.,
 *    "A new multi-position calibration method for MEMS inertial navigation systems", Meas. Sci. Technol. 18, 2007).
 *    Observable only when the gravity directions in the IMU frame differ enough: the smallest eigenvalue of the
 *    information matrix must reach 5 % of the largest (common practice).
 * 2. The run-level visual–inertial alignment (gravity-scale.ts), where heading changes separate bias from tilt.
 */
import type { ImuColumns } from '@plumbline/bundle';
import { solveSpd, symmetricEigen } from './small-math.ts';
import type { TimeInterval, Vec3Result } from './types.ts';

/** Sphere-of-known-radius fit over stationary intervals; unobservable without orientation diversity. */
export function accelBiasFromStationary(imu: ImuColumns, stationary: readonly TimeInterval[], gravityMS2: number): Vec3Result {
  const f: number[][] = [];
  const noise: number[] = [];
  let i = 0;
  for (const s of stationary) {
    while (i < imu.n && imu.t[i]! < s.tStart) i++;
    let sx = 0, sy = 0, sz = 0, sq = 0, m = 0;
    for (; i < imu.n && imu.t[i]! <= s.tEnd; i++, m++) {
      sx += imu.ax[i]!;
      sy += imu.ay[i]!;
      sz += imu.az[i]!;
      sq += imu.ax[i]! ** 2 + imu.ay[i]! ** 2 + imu.az[i]! ** 2;
    }
    if (m < 20) continue;
    const mean = [sx / m, sy / m, sz / m];
    f.push(mean);
    noise.push(Math.sqrt(Math.max(0, sq / m - (mean[0]! ** 2 + mean[1]! ** 2 + mean[2]! ** 2)) / (3 * m)));
  }
  const unit = 'm/s²';
  if (f.length < 3) return { value: null, sigma: null, unit, reason: 'unobservable: fewer than 3 stationary intervals' };
  const ba = new Float64Array(3);
  let H = new Float64Array(9);
  let rss = 0;
  for (let it = 0; it < 10; it++) {
    H = new Float64Array(9);
    const g = new Float64Array(3);
    rss = 0;
    for (const v of f) {
      const d = [v[0]! - ba[0]!, v[1]! - ba[1]!, v[2]! - ba[2]!];
      const n = Math.hypot(d[0]!, d[1]!, d[2]!);
      const r = n - gravityMS2;
      rss += r * r;
      const J = [-d[0]! / n, -d[1]! / n, -d[2]! / n];
      for (let a = 0; a < 3; a++) {
        for (let c = 0; c < 3; c++) H[a * 3 + c] = H[a * 3 + c]! + J[a]! * J[c]!;
        g[a] = g[a]! - J[a]! * r;
      }
    }
    const ev = symmetricEigen(H, 3).values;
    if (!(ev[0]! >= 0.05 * ev[2]!)) {
      return { value: null, sigma: null, unit, reason: 'unobservable: stationary intervals do not span enough orientations' };
    }
    const sol = solveSpd(H, g, 3);
    if (sol === null) return { value: null, sigma: null, unit, reason: 'unobservable: singular orientation set' };
    for (let a = 0; a < 3; a++) ba[a] = ba[a]! + sol.x[a]!;
  }
  const inv = solveSpd(H, new Float64Array(3), 3)!.inv;
  // Noise floor: the larger of the residual scatter and the averaged sample noise of one interval.
  const s2 = Math.max(f.length > 3 ? rss / (f.length - 3) : 0, Math.max(...noise) ** 2);
  return { value: [ba[0]!, ba[1]!, ba[2]!], sigma: [Math.sqrt(inv[0]! * s2), Math.sqrt(inv[4]! * s2), Math.sqrt(inv[8]! * s2)], unit };
}

/** Inverse-variance combination per axis of the available estimates; the reasons of both when neither exists. */
export function combineAccelBias(a: Vec3Result, b: Vec3Result): Vec3Result {
  if (a.value === null && b.value === null) return { value: null, sigma: null, unit: 'm/s²', reason: `${a.reason}; ${b.reason}` };
  if (a.value === null) return b;
  if (b.value === null) return a;
  const v: [number, number, number] = [0, 0, 0], s: [number, number, number] = [0, 0, 0];
  for (let k = 0; k < 3; k++) {
    const wa = 1 / a.sigma![k]! ** 2, wb = 1 / b.sigma![k]! ** 2;
    v[k] = (wa * a.value[k]! + wb * b.value[k]!) / (wa + wb);
    s[k] = Math.sqrt(1 / (wa + wb));
  }
  return { value: v, sigma: s, unit: 'm/s²' };
}
