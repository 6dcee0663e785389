/**
 * Distribution functions for gating and confidence intervals: normal CDF and quantile, log-gamma, regularised
 * incomplete gamma, chi-square CDF, survival function and quantile. Pure functions of numbers.
 */

/**
 * ln Γ(x) for x > 0 by the Lanczos approximation with g = 7 and 9 coefficients (C. Lanczos, SIAM J. Numer. Anal.
 * B 1, 1964; coefficient set as tabulated by P. Godfrey), relative error ~1e-15; reflection for x < 0.5.
 */
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];
export function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  const z = x - 1;
  let s = LANCZOS[0]!;
  for (let i = 1; i < 9; i++) s += LANCZOS[i]! / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(s);
}

const GAMMA_EPS = 1e-16;
const GAMMA_MAX_ITER = 500;

/** P(a, x) by its power series, for x < a + 1 (Press et al., "Numerical Recipes", 3rd ed., 2007, §6.2). */
function gammaSeries(a: number, x: number): number {
  let term = 1 / a;
  let sum = term;
  for (let n = 1; n < GAMMA_MAX_ITER; n++) {
    term *= x / (a + n);
    sum += term;
    if (Math.abs(term) < Math.abs(sum) * GAMMA_EPS) break;
  }
  return sum * Math.exp(-x + a * Math.log(x) - logGamma(a));
}

/** Q(a, x) by its continued fraction (modified Lentz), for x ≥ a + 1 (Numerical Recipes, 3rd ed., §6.2). */
function gammaContinuedFraction(a: number, x: number): number {
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < GAMMA_MAX_ITER; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < GAMMA_EPS) break;
  }
  return Math.exp(-x + a * Math.log(x) - logGamma(a)) * h;
}

/** Regularised lower incomplete gamma P(a, x) = γ(a, x)/Γ(a), a > 0, x ≥ 0. NaN for invalid arguments. */
export function regularizedGammaP(a: number, x: number): number {
  if (!(a > 0) || !(x >= 0)) return Number.NaN;
  if (x === 0) return 0;
  if (x === Infinity) return 1;
  return x < a + 1 ? gammaSeries(a, x) : 1 - gammaContinuedFraction(a, x);
}

/** Regularised upper incomplete gamma Q(a, x) = 1 − P(a, x), accurate in the far tail. */
export function regularizedGammaQ(a: number, x: number): number {
  if (!(a > 0) || !(x >= 0)) return Number.NaN;
  if (x === 0) return 1;
  if (x === Infinity) return 0;
  return x < a + 1 ? 1 - gammaSeries(a, x) : gammaContinuedFraction(a, x);
}

/** Standard normal CDF Φ(x) = ½·erfc(−x/√2), with erfc(z) = Q(½, z²) for z ≥ 0 (Abramowitz & Stegun 6.5.17). */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  const q = 0.5 * regularizedGammaQ(0.5, 0.5 * x * x); // = ½·erfc(|x|/√2), the tail beyond |x|
  return x >= 0 ? 1 - q : q;
}

/** Normal density φ(x). */
export function normalPdf(x: number): number {
  return Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI);
}

const A = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
const B = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
const C = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
const D = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];

/**
 * Standard normal quantile Φ⁻¹(p), p in (0, 1) (±Infinity at 0 and 1, NaN outside). P. J. Acklam's rational
 * approximation (2003; relative error 1.15e-9) followed by one Halley step on normalCdf, which brings it to
 * ~1e-15 relative.
 */
export function normalQuantile(p: number): number {
  if (!(p >= 0 && p <= 1)) return Number.NaN;
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  const pLow = 0.02425;
  let x: number;
  if (p < pLow || p > 1 - pLow) {
    const q = Math.sqrt(-2 * Math.log(p < pLow ? p : 1 - p));
    x = (((((C[0]! * q + C[1]!) * q + C[2]!) * q + C[3]!) * q + C[4]!) * q + C[5]!) / ((((D[0]! * q + D[1]!) * q + D[2]!) * q + D[3]!) * q + 1);
    if (p > 1 - pLow) x = -x;
  } else {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((A[0]! * r + A[1]!) * r + A[2]!) * r + A[3]!) * r + A[4]!) * r + A[5]!) * q) /
      (((((B[0]! * r + B[1]!) * r + B[2]!) * r + B[3]!) * r + B[4]!) * r + 1);
  }
  // Halley refinement (Acklam's note): e = Φ(x) − p, u = e·√(2π)·exp(x²/2), x ← x − u/(1 + x·u/2).
  // In the upper tail use the complementary form so that 1 − p does not lose digits.
  const e = p > 0.5 ? -(0.5 * regularizedGammaQ(0.5, 0.5 * x * x) - (1 - p)) : normalCdf(x) - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp(0.5 * x * x);
  return x - u / (1 + 0.5 * x * u);
}

/** Chi-square CDF with k degrees of freedom: F(x; k) = P(k/2, x/2). */
export function chiSquareCdf(x: number, k: number): number {
  if (x <= 0) return k > 0 ? 0 : Number.NaN;
  return regularizedGammaP(0.5 * k, 0.5 * x);
}

/** Chi-square survival function (upper tail, p-value of a test statistic): 1 − F(x; k) = Q(k/2, x/2). */
export function chiSquareSurvival(x: number, k: number): number {
  if (x <= 0) return k > 0 ? 1 : Number.NaN;
  return regularizedGammaQ(0.5 * k, 0.5 * x);
}

/** Chi-square density f(x; k). */
function chiSquarePdf(x: number, k: number): number {
  if (x <= 0) return 0;
  const h = 0.5 * k;
  return Math.exp((h - 1) * Math.log(x) - 0.5 * x - h * Math.LN2 - logGamma(h));
}

/**
 * Chi-square quantile F⁻¹(p; k), e.g. the gate for Mahalanobis distances at confidence p. Start from the
 * Wilson–Hilferty approximation (E. B. Wilson & M. M. Hilferty, PNAS 17, 1931), or from the small-x expansion
 * F ≈ (x/2)^{k/2}/Γ(k/2 + 1) deep in the lower tail, bracket the root, then Newton steps kept inside a shrinking
 * bisection bracket, to ~1e-14 relative. NaN for p outside [0, 1] or k ≤ 0; Infinity at p = 1.
 */
export function chiSquareQuantile(p: number, k: number): number {
  if (!(k > 0) || !(p >= 0 && p <= 1)) return Number.NaN;
  if (p === 0) return 0;
  if (p === 1) return Infinity;
  const h = 2 / (9 * k);
  const wh = k * (1 - h + normalQuantile(p) * Math.sqrt(h)) ** 3;
  const small = 2 * Math.exp((2 / k) * (Math.log(p) + logGamma(0.5 * k + 1)));
  let x = wh > small ? wh : small;
  let lo = 0;
  let hi = x;
  while (chiSquareCdf(hi, k) < p) {
    lo = hi;
    hi *= 2;
  }
  for (let iter = 0; iter < 200; iter++) {
    const f = chiSquareCdf(x, k) - p;
    if (f === 0) return x;
    if (f < 0) lo = x;
    else hi = x;
    let next = x - f / chiSquarePdf(x, k);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - x) <= 1e-15 * x || hi - lo <= 1e-15 * hi) return next;
    x = next;
  }
  return x;
}
