/**
 * Robust location and scale on typed arrays: quickselect median, MAD, weighted mean, M-estimator weights and
 * running window statistics. Line fits and change-point detectors live in robust-fit.ts and change-point.ts.
 * NaN entries are skipped by every function here (absent samples stay absent).
 */

/** Consistency factor making the MAD an unbiased σ estimate for normal data: 1/Φ⁻¹(3/4) ≈ 1.4826 (standard normal tables). */
export const MAD_TO_SIGMA = 1.482602218505602;

/**
 * k-th smallest (0-based) of a[0..n) by quickselect (C. A. R. Hoare, CACM 4(7), 1961, "FIND"), median-of-three
 * pivot, in place: a is partially reordered. Expected O(n).
 */
export function select(a: Float64Array, n: number, k: number): number {
  if (!(k >= 0 && k < n)) throw new RangeError(`select: k = ${k} outside 0..${n - 1}`);
  let lo = 0;
  let hi = n - 1;
  while (hi > lo) {
    const mid = (lo + hi) >>> 1;
    // median of three moved to a[mid]
    if (a[mid]! < a[lo]!) swap(a, mid, lo);
    if (a[hi]! < a[lo]!) swap(a, hi, lo);
    if (a[hi]! < a[mid]!) swap(a, hi, mid);
    const pivot = a[mid]!;
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i]! < pivot) i++;
      while (a[j]! > pivot) j--;
      if (i <= j) {
        swap(a, i, j);
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k]!;
  }
  return a[k]!;
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i]!;
  a[i] = a[j]!;
  a[j] = t;
}

/** Copies the non-NaN values of v into scratch (grown if too small) and returns [scratch, count]. */
function finiteCopy(v: ArrayLike<number>, scratch: Float64Array | null): [Float64Array, number] {
  const buf = scratch && scratch.length >= v.length ? scratch : new Float64Array(v.length);
  let n = 0;
  for (let i = 0; i < v.length; i++) {
    const x = v[i]!;
    if (!Number.isNaN(x)) buf[n++] = x;
  }
  return [buf, n];
}

/** Median of the non-NaN values in a[n] already copied; average of the two middle values for even n. */
function medianInPlace(a: Float64Array, n: number): number {
  if (n === 0) return Number.NaN;
  const h = n >>> 1;
  const upper = select(a, n, h);
  if (n % 2 === 1) return upper;
  // after select, a[0..h) holds the lower half: its maximum is the other middle value
  let lower = a[0]!;
  for (let i = 1; i < h; i++) if (a[i]! > lower) lower = a[i]!;
  return 0.5 * (lower + upper);
}

/** Median of the non-NaN values (NaN if none); v is not modified. Pass `scratch` (length ≥ v.length) to avoid allocation. */
export function median(v: ArrayLike<number>, scratch: Float64Array | null = null): number {
  const [buf, n] = finiteCopy(v, scratch);
  return medianInPlace(buf, n);
}

/** p-quantile (0 ≤ p ≤ 1) with linear interpolation between order statistics (Hyndman & Fan 1996, type 7). */
export function quantile(v: ArrayLike<number>, p: number, scratch: Float64Array | null = null): number {
  const [buf, n] = finiteCopy(v, scratch);
  if (n === 0 || !(p >= 0 && p <= 1)) return Number.NaN;
  const pos = p * (n - 1);
  const k = Math.floor(pos);
  const lo = select(buf, n, k);
  if (k + 1 >= n || pos === k) return lo;
  let hi = buf[k + 1]!;
  for (let i = k + 2; i < n; i++) if (buf[i]! < hi) hi = buf[i]!;
  return lo + (pos - k) * (hi - lo);
}

/**
 * Median absolute deviation about the median, and the implied normal σ = 1.4826·MAD (F. R. Hampel, JASA 69, 1974;
 * factor from standard normal tables). Robust to up to 50 % outliers.
 */
export function mad(v: ArrayLike<number>, scratch: Float64Array | null = null): { median: number; mad: number; sigma: number; n: number } {
  const [buf, n] = finiteCopy(v, scratch);
  const med = medianInPlace(buf, n);
  for (let i = 0; i < n; i++) buf[i] = Math.abs(buf[i]! - med);
  const m = medianInPlace(buf, n);
  return { median: med, mad: m, sigma: MAD_TO_SIGMA * m, n };
}

/** Σwᵢxᵢ / Σwᵢ over entries where both are finite and wᵢ > 0; NaN when no weight. */
export function weightedMean(v: ArrayLike<number>, w: ArrayLike<number>): number {
  if (v.length !== w.length) throw new RangeError(`weightedMean: ${v.length} values, ${w.length} weights`);
  let sw = 0;
  let s = 0;
  for (let i = 0; i < v.length; i++) {
    const wi = w[i]!, x = v[i]!;
    if (!(wi > 0) || Number.isNaN(x)) continue;
    sw += wi;
    s += wi * x;
  }
  return sw > 0 ? s / sw : Number.NaN;
}

/**
 * Huber weight for a standardised residual u = r/σ: 1 for |u| ≤ k, k/|u| beyond (P. J. Huber, Ann. Math. Stat. 35,
 * 1964). k = 1.345 gives 95 % efficiency at the normal (P. W. Holland & R. E. Welsch, 1977 — from memory).
 */
export function huberWeight(u: number, k = 1.345): number {
  const a = Math.abs(u);
  return a <= k ? 1 : k / a;
}

/** Cauchy (Lorentzian) weight 1/(1 + (u/c)²); c = 2.3849 gives 95 % normal efficiency (Holland & Welsch 1977 — from memory). */
export function cauchyWeight(u: number, c = 2.3849): number {
  const z = u / c;
  return 1 / (1 + z * z);
}

/**
 * Trailing-window mean and variance (unbiased, n − 1) over the last `window` samples ending at i:
 * outMean[i], outVar[i] use v[max(0, i − window + 1) .. i], skipping NaN (NaN out when the window has no value;
 * variance NaN below 2 values). O(n): Welford-style add/remove updates (B. P. Welford, Technometrics 4, 1962), with
 * an exact two-pass recomputation of the window every `window` steps so rounding drift cannot accumulate.
 */
export function runningMeanVar(outMean: Float64Array, outVar: Float64Array, v: Float64Array, window: number): void {
  const n = v.length;
  if (outMean.length < n || outVar.length < n) throw new RangeError('runningMeanVar: output shorter than input');
  if (!(window >= 1)) throw new RangeError(`runningMeanVar: window ${window} < 1`);
  let count = 0;
  let mean = 0;
  let m2 = 0;
  for (let i = 0; i < n; i++) {
    const x = v[i]!;
    if (!Number.isNaN(x)) {
      count++;
      const d = x - mean;
      mean += d / count;
      m2 += d * (x - mean);
    }
    const j = i - window;
    if (j >= 0 && !Number.isNaN(v[j]!)) {
      const y = v[j]!;
      count--;
      if (count === 0) {
        mean = 0;
        m2 = 0;
      } else {
        const d = y - mean;
        mean -= d / count;
        m2 -= d * (y - mean);
      }
    }
    if (i % window === window - 1 && count > 0) {
      // periodic exact refresh over v[i − window + 1 .. i]: O(window) every window steps keeps the pass O(n)
      let s = 0;
      for (let k = i - window + 1; k <= i; k++) if (!Number.isNaN(v[k]!)) s += v[k]!;
      mean = s / count;
      m2 = 0;
      for (let k = i - window + 1; k <= i; k++) if (!Number.isNaN(v[k]!)) m2 += (v[k]! - mean) ** 2;
    }
    outMean[i] = count > 0 ? mean : Number.NaN;
    outVar[i] = count > 1 ? Math.max(0, m2 / (count - 1)) : Number.NaN;
  }
}
