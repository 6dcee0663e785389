/**
 * Change detection on a uniformly indexed series (e.g. per-segment drift rates or innovation norms).
 */

export interface CusumAlarm {
  /** Index at which the cumulative sum crossed the threshold. */
  index: number;
  /** Estimated start of the shift: the last index at which that side's sum was zero, plus one. */
  onset: number;
  /** +1 for an upward shift, −1 for a downward shift. */
  direction: 1 | -1;
}

/**
 * Two-sided tabular CUSUM (E. S. Page, "Continuous inspection schemes", Biometrika 41, 1954; NIST/SEMATECH
 * e-Handbook, CUSUM control charts — from memory): S⁺ᵢ = max(0, S⁺ᵢ₋₁ + xᵢ − target − slack), S⁻ᵢ = max(0, S⁻ᵢ₋₁ − xᵢ + target − slack);
 * an alarm is raised when either exceeds `threshold`, after which both sums restart. Units of target, slack and
 * threshold are those of the series (common choice: slack = σ/2, threshold = 4–5σ). NaN samples are skipped.
 */
export function cusum(values: Float64Array, target: number, slack: number, threshold: number): CusumAlarm[] {
  const alarms: CusumAlarm[] = [];
  let hi = 0, lo = 0, hiStart = 0, loStart = 0;
  for (let i = 0; i < values.length; i++) {
    const x = values[i]!;
    if (Number.isNaN(x)) continue;
    hi = Math.max(0, hi + x - target - slack);
    lo = Math.max(0, lo - x + target - slack);
    if (hi === 0) hiStart = i + 1;
    if (lo === 0) loStart = i + 1;
    if (hi > threshold || lo > threshold) {
      const up = hi > threshold;
      alarms.push({ index: i, onset: up ? hiStart : loStart, direction: up ? 1 : -1 });
      hi = lo = 0;
      hiStart = loStart = i + 1;
    }
  }
  return alarms;
}

export type StepChangeResult =
  | {
      ok: true;
      /** First index of the second segment. */
      index: number;
      meanBefore: number;
      meanAfter: number;
      /** Sum of squared deviations about one mean, and about the two segment means. */
      sseOne: number;
      sseTwo: number;
      /** Two-sample t statistic of the split, with the pooled within-segment σ (n − 2 dof). */
      tStatistic: number;
    }
  | { ok: false; reason: 'too-few-points' | 'not-finite' };

/**
 * Single step change by least squares: the split k minimising the two-segment sum of squared deviations
 * (D. V. Hinkley, "Inference about the change-point in a sequence of random variables", Biometrika 57, 1970).
 * O(n) with prefix sums of the mean-centred series. Each segment keeps at least `minSegment` samples.
 */
export function stepChange(values: Float64Array, minSegment = 2): StepChangeResult {
  const n = values.length;
  if (n < 2 * Math.max(1, minSegment)) return { ok: false, reason: 'too-few-points' };
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i]!;
  mean /= n;
  if (!Number.isFinite(mean)) return { ok: false, reason: 'not-finite' };
  let total = 0, total2 = 0;
  for (let i = 0; i < n; i++) {
    const d = values[i]! - mean;
    total += d;
    total2 += d * d;
  }
  // SSE(split at k) = total2 − S_k²/k − (total − S_k)²/(n − k) with S_k the prefix sum: maximise the explained part
  let best = -1, bestGain = -Infinity, prefix = 0, bestPrefix = 0;
  const m = Math.max(1, minSegment);
  for (let k = 1; k < n; k++) {
    prefix += values[k - 1]! - mean;
    if (k < m || n - k < m) continue;
    const gain = (prefix * prefix) / k + ((total - prefix) * (total - prefix)) / (n - k);
    if (gain > bestGain) {
      bestGain = gain;
      best = k;
      bestPrefix = prefix;
    }
  }
  const meanBefore = mean + bestPrefix / best;
  const meanAfter = mean + (total - bestPrefix) / (n - best);
  const sseOne = total2 - (total * total) / n;
  const sseTwo = Math.max(0, total2 - bestGain);
  const pooled = n > 2 ? Math.sqrt(sseTwo / (n - 2)) : Number.NaN;
  const tStatistic = (meanAfter - meanBefore) / (pooled * Math.sqrt(1 / best + 1 / (n - best)));
  return { ok: true, index: best, meanBefore, meanAfter, sseOne, sseTwo, tStatistic };
}
