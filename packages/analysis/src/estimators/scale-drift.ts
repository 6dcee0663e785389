/**
 * Scale drift and scale steps of the odometry.
 *
 * What: the robust trend of the window scale against distance travelled (% of scale per 100 m, with a 95 % CI), and
 * steps (e.g. a tracking re-initialisation) located in time with a 1-sigma time uncertainty.
 * Method: trend by the Theil–Sen estimator (median of pairwise slopes) with the distribution-free CI of P. K. Sen,
 * "Estimates of the regression coefficient based on Kendall's tau", JASA 63, 1968 (normal approximation of the
 * variance of Kendall's S), on non-overlapping windows. Steps: the difference of the medians of K windows before and
 * after each window boundary, against the noise of successive differences (MAD); a step is kept when it exceeds 5σ
 * and 1.5 % (common practice), then located at finer resolution than a window by a two-level least-squares fit to
 * the per-triplet scale estimates s_r = λ·(y − βg + M·ba)/|λ|² (weights |λ|²) around the boundary (a change-point
 * search in the manner of E. S. Page, "Continuous inspection schemes", Biometrika 41, 1954).
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { madSigma, medianOf } from './small-math.ts';
import { noScalar, scalar, type ScalarResult, type WindowSeries } from './types.ts';

export interface ScaleStep {
  /** Step time (IMU clock) and its 1-sigma, s. */
  t: number;
  sigmaS: number;
  before: number;
  after: number;
  /** (after/before − 1)·100 */
  stepPct: number;
}

export interface ScaleDriftResult {
  driftPctPer100m: ScalarResult;
  ci95: [number, number] | null;
  steps: ScaleStep[];
}

export interface ScaleDriftOptions {
  /** Windows each side of a boundary for the step test (default 3). */
  stepWindows?: number;
  /** Smallest step reported, % (default 1.5). */
  minStepPct?: number;
}

/** Theil–Sen slope with Sen's 95 % CI; null with fewer than 4 points. */
export function theilSen(x: ArrayLike<number>, y: ArrayLike<number>): { slope: number; lo: number; hi: number; intercept: number } | null {
  const n = x.length;
  if (n < 4) return null;
  const slopes: number[] = [];
  for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) if (x[j]! !== x[i]!) slopes.push((y[j]! - y[i]!) / (x[j]! - x[i]!));
  if (slopes.length < 3) return null;
  slopes.sort((a, b) => a - b);
  const N = slopes.length;
  const slope = medianOf(slopes);
  // Sen 1968: C = z_{0.975}·√(n(n−1)(2n+5)/18); CI = [slope_(N−C)/2, slope_(N+C)/2 + 1] (1-based ranks).
  const C = 1.96 * Math.sqrt((n * (n - 1) * (2 * n + 5)) / 18);
  const lo = slopes[Math.max(0, Math.floor((N - C) / 2) - 1)]!;
  const hi = slopes[Math.min(N - 1, Math.ceil((N + C) / 2))]!;
  const res = Array.from({ length: n }, (_, i) => y[i]! - slope * x[i]!);
  return { slope, lo, hi, intercept: medianOf(res) };
}

/**
 * `scale`: window scale series (NaN = unobservable); `distanceM`: metric distance at each window centre;
 * rows/rowG/rowBias: alignment rows with the run-level gravity and bias for the step refinement.
 */
export function estimateScaleDrift(
  scale: WindowSeries, distanceM: Float64Array, windowOverlap: number,
  rows: AlignmentRows, gravity: Float64Array, bias: Float64Array, options: ScaleDriftOptions = {},
): ScaleDriftResult {
  const stride = windowOverlap >= 0.5 ? Math.round(1 / (1 - windowOverlap)) : 1;
  const xs: number[] = [], ys: number[] = [];
  for (let w = 0; w < scale.value.length; w += stride) {
    if (Number.isFinite(scale.value[w]!)) {
      xs.push(distanceM[w]!);
      ys.push(scale.value[w]!);
    }
  }
  const steps = findSteps(scale, rows, gravity, bias, options);
  // Fit the trend on segments between steps by removing each step's level change.
  const adj = ys.map((v, i) => {
    let f = 1;
    for (const s of steps) if (timeAtDistance(scale, distanceM, xs[i]!) >= s.t) f *= s.before / s.after;
    return v * f;
  });
  const thin = thinPoints(xs, adj, 400);
  const ts = theilSen(thin.x, thin.y);
  const level = medianOf(adj);
  if (ts === null || !(level > 0)) {
    return { driftPctPer100m: noScalar('%/100m', 'unobservable: fewer than 4 observable non-overlapping windows'), ci95: null, steps };
  }
  const k = (100 * 100) / level;
  return {
    driftPctPer100m: scalar(ts.slope * k, ((ts.hi - ts.lo) * k) / (2 * 1.96), '%/100m'),
    ci95: [ts.lo * k, ts.hi * k],
    steps,
  };
}

function timeAtDistance(scale: WindowSeries, d: Float64Array, x: number): number {
  for (let w = 0; w < d.length; w++) if (d[w]! >= x) return scale.t[w]!;
  return scale.t[scale.t.length - 1]!;
}

/** Keeps at most `max` points by taking medians of equal-count bins (keeps Theil–Sen O(max²)). */
function thinPoints(x: number[], y: number[], max: number): { x: number[]; y: number[] } {
  if (x.length <= max) return { x, y };
  const bin = Math.ceil(x.length / max);
  const ox: number[] = [], oy: number[] = [];
  for (let i = 0; i < x.length; i += bin) {
    ox.push(medianOf(x.slice(i, i + bin)));
    oy.push(medianOf(y.slice(i, i + bin)));
  }
  return { x: ox, y: oy };
}

function findSteps(scale: WindowSeries, rows: AlignmentRows, g: Float64Array, ba: Float64Array, options: ScaleDriftOptions): ScaleStep[] {
  const K = options.stepWindows ?? 3;
  const minPct = options.minStepPct ?? 1.5;
  const idx: number[] = [];
  for (let w = 0; w < scale.value.length; w++) if (Number.isFinite(scale.value[w]!)) idx.push(w);
  if (idx.length < 2 * K) return [];
  const v = idx.map((w) => scale.value[w]!);
  const diffs = v.slice(1).map((x, i) => x - v[i]!);
  const noise = Math.max(madSigma(diffs) / Math.SQRT2, 1e-4);
  const cand: { i: number; d: number }[] = [];
  for (let i = K; i + K <= v.length; i++) {
    const before = medianOf(v.slice(i - K, i)), after = medianOf(v.slice(i, i + K));
    const d = after - before;
    if (Math.abs(d) > 5 * noise * Math.sqrt(2 / K) && Math.abs(d / before) * 100 >= minPct) cand.push({ i, d });
  }
  // Keep local maxima of |d| separated by at least K windows.
  const steps: ScaleStep[] = [];
  cand.sort((a, b) => Math.abs(b.d) - Math.abs(a.d));
  const taken: number[] = [];
  for (const c of cand) {
    if (taken.some((i) => Math.abs(i - c.i) < 2 * K)) continue;
    taken.push(c.i);
    const before = medianOf(v.slice(c.i - K, c.i)), after = medianOf(v.slice(c.i, c.i + K));
    const ta = scale.t[idx[c.i - 1]!]!, tb = scale.t[idx[c.i]!]!;
    const span = tb - ta + 10;
    steps.push(locateStep(rows, g, ba, ta - span / 2, tb + span / 2, before, after));
  }
  return steps.sort((a, b) => a.t - b.t);
}

/** Two-level weighted least squares on per-row scale estimates in [t0, t1]; the split with the least SSE. */
function locateStep(rows: AlignmentRows, g: Float64Array, ba: Float64Array, t0: number, t1: number, before: number, after: number): ScaleStep {
  const sr: number[] = [], wr: number[] = [], tr: number[] = [];
  for (let r = 0; r < rows.n; r++) {
    const t = rows.t[r]!;
    if (t < t0 || t > t1) continue;
    let num = 0, den = 0;
    for (let i = 0; i < 3; i++) {
      let y = rows.y[3 * r + i]! - rows.beta[r]! * g[i]!;
      for (let j = 0; j < 3; j++) y += rows.m[9 * r + 3 * i + j]! * ba[j]!;
      const l = rows.lam[3 * r + i]!;
      num += l * y;
      den += l * l;
    }
    if (den < 1e-6) continue;
    sr.push(num / den);
    wr.push(den);
    tr.push(t);
  }
  const fallback = { t: 0.5 * (t0 + t1), sigmaS: (t1 - t0) / Math.sqrt(12), before, after, stepPct: (after / before - 1) * 100 };
  if (sr.length < 4) return fallback;
  // Prefix sums of w, w·s, w·s² give each split's SSE in O(1).
  const n = sr.length;
  const W = new Float64Array(n + 1), S = new Float64Array(n + 1), Q = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) {
    W[i + 1] = W[i]! + wr[i]!;
    S[i + 1] = S[i]! + wr[i]! * sr[i]!;
    Q[i + 1] = Q[i]! + wr[i]! * sr[i]! * sr[i]!;
  }
  const sse = (a: number, b: number) => Q[b]! - Q[a]! - (S[b]! - S[a]!) ** 2 / (W[b]! - W[a]!);
  let best = -1, bestSse = Number.POSITIVE_INFINITY;
  const sses = new Float64Array(n);
  for (let k = 1; k < n; k++) {
    sses[k] = sse(0, k) + sse(k, n);
    if (sses[k]! < bestSse) [bestSse, best] = [sses[k]!, k];
  }
  const sigma2 = bestSse / Math.max(1, W[n]! * (n - 2) / n);
  // Time uncertainty: splits whose SSE is within one σ² (Δχ² = 1) of the best.
  let lo = best, hi = best;
  while (lo > 1 && sses[lo - 1]! - bestSse < sigma2) lo--;
  while (hi < n - 1 && sses[hi + 1]! - bestSse < sigma2) hi++;
  const t = 0.5 * (tr[best - 1]! + tr[best]!);
  const b = (S[best]! / W[best]!), a = (S[n]! - S[best]!) / (W[n]! - W[best]!);
  return { t, sigmaS: Math.max(0.5 * (tr[hi]! - tr[lo - 1]!), 0.25), before: b, after: a, stepPct: (a / b - 1) * 100 };
}
