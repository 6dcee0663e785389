/**
 * Robust straight-line fits y ≈ a + b·x on columnar data: Theil–Sen slope with Sen's confidence interval, and
 * iteratively reweighted least squares with Huber or Cauchy weights. Pairs/points with NaN are skipped.
 */
import { MAD_TO_SIGMA, cauchyWeight, huberWeight, median, select } from './robust.ts';
import { normalQuantile } from './stats.ts';

export type TheilSenResult =
  | {
      ok: true;
      /** Median of pairwise slopes, units of y per unit of x. */
      slope: number;
      /** Median of y − slope·x. */
      intercept: number;
      /** Distribution-free confidence interval of the slope at the requested level (Sen 1968). */
      slopeLow: number;
      slopeHigh: number;
      /** Points used (after NaN removal and any thinning) and pairwise slopes formed. */
      n: number;
      pairs: number;
    }
  | { ok: false; reason: 'too-few-points' | 'degenerate'; n: number };

/**
 * Theil–Sen estimator (H. Theil, 1950; P. K. Sen, "Estimates of the regression coefficient based on Kendall's tau",
 * JASA 63, 1968) with Sen's interval: with N slopes and C = z₁₋α/₂·√(n(n−1)(2n+5)/18), the bounds are the slopes of
 * rank (N − C)/2 and (N + C)/2 + 1 (ties in x ignored in C). Breakdown point 29 %. O(n²) pairs: above `maxPairs`
 * (default 2·10⁶) the points are thinned evenly first, which widens the interval honestly.
 */
export function theilSen(
  x: Float64Array,
  y: Float64Array,
  options: { confidence?: number; maxPairs?: number } = {},
): TheilSenResult {
  if (x.length !== y.length) throw new RangeError(`theilSen: x has ${x.length} values, y ${y.length}`);
  const confidence = options.confidence ?? 0.95;
  const maxPairs = options.maxPairs ?? 2_000_000;
  let finite = 0;
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i]! + y[i]!)) finite++;
  const stride = Math.max(1, Math.ceil(Math.sqrt((finite * (finite - 1)) / 2 / maxPairs)));
  const idx = new Int32Array(Math.ceil(finite / stride));
  let n = 0;
  for (let i = 0, f = 0; i < x.length; i++) {
    if (!Number.isFinite(x[i]! + y[i]!)) continue;
    if (f++ % stride === 0) idx[n++] = i;
  }
  if (n < 2) return { ok: false, reason: 'too-few-points', n };
  const slopes = new Float64Array((n * (n - 1)) / 2);
  let m = 0;
  for (let a = 0; a < n; a++) {
    const i = idx[a]!;
    for (let b = a + 1; b < n; b++) {
      const j = idx[b]!;
      const dx = x[j]! - x[i]!;
      if (dx !== 0) slopes[m++] = (y[j]! - y[i]!) / dx;
    }
  }
  if (m === 0) return { ok: false, reason: 'degenerate', n };
  const c = normalQuantile(0.5 + confidence / 2) * Math.sqrt((n * (n - 1) * (2 * n + 5)) / 18);
  const lowRank = Math.max(1, Math.round((m - c) / 2)); // 1-based ranks
  const highRank = Math.min(m, Math.round((m + c) / 2) + 1);
  const slopeLow = select(slopes, m, lowRank - 1);
  const slopeHigh = select(slopes, m, highRank - 1);
  const slope = median(slopes.subarray(0, m), slopes.subarray(0, m));
  const resid = new Float64Array(n);
  for (let a = 0; a < n; a++) resid[a] = y[idx[a]!]! - slope * x[idx[a]!]!;
  return { ok: true, slope, intercept: median(resid, resid), slopeLow, slopeHigh, n, pairs: m };
}

export type IrlsResult =
  | {
      ok: true;
      slope: number;
      intercept: number;
      /** Robust residual scale 1.4826·MAD at convergence, units of y. */
      sigma: number;
      iterations: number;
      converged: boolean;
      /** Final weight of each input point in [0, 1] (0 for NaN points): small weights mark outliers. */
      weights: Float64Array;
    }
  | { ok: false; reason: 'too-few-points' | 'degenerate'; n: number };

/**
 * M-estimate of a straight line by iteratively reweighted least squares (P. W. Holland & R. E. Welsch,
 * "Robust regression using iteratively reweighted least-squares", Comm. Stat. A6(9), 1977): weights from the
 * Huber or Cauchy function of residual/σ, σ re-estimated each pass as 1.4826·MAD of the residuals.
 * Starts from a Theil–Sen fit on at most 400 evenly spaced points, so the redescending Cauchy loss starts near the
 * robust solution rather than at the outlier-pulled ordinary least-squares line.
 */
export function irlsLine(
  x: Float64Array,
  y: Float64Array,
  options: { loss?: 'huber' | 'cauchy'; tuning?: number; maxIterations?: number; tolerance?: number } = {},
): IrlsResult {
  const len = x.length;
  if (y.length !== len) throw new RangeError(`irlsLine: x has ${len} values, y ${y.length}`);
  const cauchy = options.loss === 'cauchy';
  const tuning = options.tuning ?? (cauchy ? 2.3849 : 1.345);
  const maxIterations = options.maxIterations ?? 50;
  const tol = options.tolerance ?? 1e-10;
  const start = theilSen(x, y, { maxPairs: 80_000 });
  if (!start.ok) return start;
  let slope = start.slope, intercept = start.intercept;
  const w = new Float64Array(len);
  const r = new Float64Array(len);
  const scratch = new Float64Array(len);
  let sigma = 0;
  let iterations = 0;
  let converged = false;
  while (iterations < maxIterations && !converged) {
    iterations++;
    for (let i = 0; i < len; i++) r[i] = y[i]! - intercept - slope * x[i]!; // NaN stays NaN and is skipped
    sigma = MAD_TO_SIGMA * medianAbs(r, scratch);
    let sw = 0, sx = 0, sy = 0;
    for (let i = 0; i < len; i++) {
      const ri = r[i]!;
      if (Number.isNaN(ri)) {
        w[i] = 0;
        continue;
      }
      const u = sigma > 0 ? ri / sigma : ri === 0 ? 0 : Infinity;
      const wi = cauchy ? cauchyWeight(u, tuning) : huberWeight(u, tuning);
      w[i] = wi;
      sw += wi;
      sx += wi * x[i]!;
      sy += wi * y[i]!;
    }
    const mx = sx / sw, my = sy / sw;
    let sxx = 0, sxy = 0;
    for (let i = 0; i < len; i++) {
      const wi = w[i]!;
      if (wi === 0) continue;
      const dx = x[i]! - mx;
      sxx += wi * dx * dx;
      sxy += wi * dx * (y[i]! - my);
    }
    if (!(sxx > 0)) return { ok: false, reason: 'degenerate', n: start.n };
    const b = sxy / sxx, a = my - b * mx;
    converged = Math.abs(b - slope) <= tol * (1 + Math.abs(b)) && Math.abs(a - intercept) <= tol * (1 + Math.abs(a));
    slope = b;
    intercept = a;
  }
  return { ok: true, slope, intercept, sigma, iterations, converged, weights: w };
}

/** Median of |r| over non-NaN entries (used for the MAD about zero of residuals). */
function medianAbs(r: Float64Array, scratch: Float64Array): number {
  for (let i = 0; i < r.length; i++) scratch[i] = Math.abs(r[i]!);
  return median(scratch, scratch);
}
