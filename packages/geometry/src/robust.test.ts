import { describe, it, expect } from 'vitest';
import * as robust from './robust.ts';
import { theilSen, irlsLine } from './robust-fit.ts';
import { cusum, stepChange } from './change-point.ts';
import { normalQuantile } from './stats.ts';
import { createRng, expectClose, gaussian } from './testing.ts';

function sortedMedian(v: number[]): number {
  const s = v.filter((x) => !Number.isNaN(x)).sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h]! : 0.5 * (s[h - 1]! + s[h]!);
}

describe('median / select / quantile', () => {
  it('matches sorting on 300 random arrays with duplicates and NaN, leaving the input untouched', () => {
    const rng = createRng(61);
    for (let k = 0; k < 300; k++) {
      const n = 1 + Math.floor(rng() * 60);
      const v = Float64Array.from({ length: n }, () => (rng() < 0.1 ? Number.NaN : Math.round(rng() * 20)));
      const copy = Float64Array.from(v);
      const ref = sortedMedian(Array.from(v));
      const got = robust.median(v);
      if (Number.isNaN(ref)) expect(Number.isNaN(got)).toBe(true);
      else expectClose(got, ref, 0, `median case ${k}`);
      expect(Array.from(v).map(String)).toEqual(Array.from(copy).map(String));
    }
  });
  it('quantile follows Hyndman–Fan type 7 (linear interpolation of order statistics)', () => {
    const v = Float64Array.of(10, 1, 9, 2, 8, 3, 7, 4, 6, 5);
    expectClose(robust.quantile(v, 0.25), 3.25, 1e-15, 'q25'); // (n−1)p = 2.25 → 3 + 0.25
    expectClose(robust.quantile(v, 0.9), 9.1, 1e-14, 'q90');
    expectClose(robust.quantile(v, 1), 10, 0, 'max');
  });
});

describe('MAD and σ', () => {
  it('MAD of {1, 1, 2, 2, 4, 6, 9} is 1 about the median 2 (textbook example, from memory)', () => {
    const r = robust.mad(Float64Array.of(1, 1, 2, 2, 4, 6, 9));
    expect([r.median, r.mad]).toEqual([2, 1]);
  });
  it('the 1.4826 factor equals 1/Φ⁻¹(3/4) (standard normal tables, CHECK-VALUES.md)', () => {
    expectClose(robust.MAD_TO_SIGMA, 1 / normalQuantile(0.75), 1e-12, 'factor');
    expectClose(robust.MAD_TO_SIGMA, 1.4826, 5e-5, 'tabulated 1.4826');
  });
  it('estimates σ = 2 from 20,000 normal samples with 10 % gross outliers within 4 %', () => {
    const rng = createRng(62);
    const v = Float64Array.from({ length: 20000 }, (_, i) => (i % 10 === 0 ? 1e3 : 5 + 2 * gaussian(rng)));
    const r = robust.mad(v);
    // 10 % one-sided contamination biases the MAD upward by ~7 % at most; 4 % band checked empirically with this seed
    expect(r.sigma).toBeGreaterThan(2);
    expect(r.sigma).toBeLessThan(2.3);
    expectClose(r.median, 5.25, 0.1, 'median shifted by the outliers'); // Φ⁻¹(0.5/0.9)·2 ≈ 0.28
  });
});

describe('weights and means', () => {
  it('weightedMean skips NaN and non-positive weights', () => {
    expectClose(robust.weightedMean([1, 2, Number.NaN, 10], [1, 3, 5, 0]), 7 / 4, 1e-15, 'mean');
    expect(Number.isNaN(robust.weightedMean([1], [0]))).toBe(true);
  });
  it('Huber and Cauchy weights at their definitions', () => {
    expect(robust.huberWeight(1.0)).toBe(1);
    expectClose(robust.huberWeight(-2.69), 0.5, 1e-15, 'Huber k/|u|');
    expectClose(robust.cauchyWeight(2.3849), 0.5, 1e-15, 'Cauchy at c');
  });
});

describe('runningMeanVar', () => {
  it('matches a direct trailing-window computation with NaN gaps', () => {
    const rng = createRng(63);
    const n = 2000, win = 25;
    const v = Float64Array.from({ length: n }, (_, i) => (i % 97 === 5 ? Number.NaN : 1e3 + Math.sin(i / 30) + 0.1 * gaussian(rng)));
    const mean = new Float64Array(n), vr = new Float64Array(n);
    robust.runningMeanVar(mean, vr, v, win);
    for (let i = 1; i < n; i += 7) {
      const w = Array.from(v.subarray(Math.max(0, i - win + 1), i + 1)).filter((x) => !Number.isNaN(x));
      const m = w.reduce((s, x) => s + x, 0) / w.length;
      const s2 = w.reduce((s, x) => s + (x - m) ** 2, 0) / (w.length - 1);
      expectClose(mean[i]!, m, 1e-10, `mean at ${i}`);
      expectClose(vr[i]!, s2, 1e-10, `var at ${i}`); // values ~1e3 with variance ~0.01: relative 1e-8
    }
  });
  it('stays accurate over 200,000 samples with a large offset', () => {
    const rng = createRng(69);
    const n = 200_000, win = 100;
    const v = Float64Array.from({ length: n }, () => 1e6 + 0.01 * gaussian(rng));
    const mean = new Float64Array(n), vr = new Float64Array(n);
    robust.runningMeanVar(mean, vr, v, win);
    const w = Array.from(v.subarray(n - win));
    const m = w.reduce((s, x) => s + x, 0) / win;
    const s2 = w.reduce((s, x) => s + (x - m) ** 2, 0) / (win - 1);
    expectClose(vr[n - 1]!, s2, 1e-3 * s2, 'variance at the end'); // σ² = 1e-4 on values 1e6: relative 1e-3
  });
});

describe('Theil–Sen (Sen 1968)', () => {
  it('ignores 25 % gross outliers on an exact line', () => {
    const n = 80;
    const x = Float64Array.from({ length: n }, (_, i) => i * 0.5);
    const y = Float64Array.from(x, (xi, i) => (i % 4 === 1 ? 500 - 7 * i : 2 - 0.3 * xi));
    const r = theilSen(x, y);
    if (!r.ok) throw new Error(r.reason);
    expectClose(r.slope, -0.3, 1e-12, 'slope');
    expectClose(r.intercept, 2, 1e-12, 'intercept');
  });
  it('95 % interval covers the true slope in 93–97 % of 1,000 noisy data sets (n = 25)', () => {
    const rng = createRng(64);
    let covered = 0;
    const x = Float64Array.from({ length: 25 }, (_, i) => i);
    const y = new Float64Array(25);
    for (let k = 0; k < 1000; k++) {
      for (let i = 0; i < 25; i++) y[i] = 1 + 0.2 * i + gaussian(rng);
      const r = theilSen(x, y);
      if (r.ok && r.slopeLow <= 0.2 && 0.2 <= r.slopeHigh) covered++;
    }
    // binomial SE at 95 % over 1,000 trials is 0.7 %: a ±2 % band is ~3 SE
    expect(covered).toBeGreaterThanOrEqual(930);
    expect(covered).toBeLessThanOrEqual(970);
  });
  it('thins large inputs to the pair budget and reports degenerate x', () => {
    const n = 3000;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const y = Float64Array.from(x, (xi) => 3 * xi + 1);
    const r = theilSen(x, y, { maxPairs: 100_000 });
    if (!r.ok) throw new Error(r.reason);
    expect(r.pairs).toBeLessThanOrEqual(100_000);
    expectClose(r.slope, 3, 1e-12, 'slope');
    expect(theilSen(Float64Array.of(1, 1, 1), Float64Array.of(1, 2, 3))).toMatchObject({ ok: false, reason: 'degenerate' });
  });
});

describe('IRLS line (Holland & Welsch 1977)', () => {
  for (const loss of ['huber', 'cauchy'] as const) {
    it(`${loss}: recovers slope and intercept under 20 % outliers and down-weights them`, () => {
      const rng = createRng(65);
      const n = 500;
      const x = Float64Array.from({ length: n }, (_, i) => i / 10);
      const y = Float64Array.from(x, (xi, i) => (i % 5 === 0 ? 40 + 20 * rng() : -1.5 + 0.75 * xi + 0.05 * gaussian(rng)));
      const r = irlsLine(x, y, { loss });
      if (!r.ok) throw new Error(r.reason);
      expect(r.converged).toBe(true);
      // noise σ = 0.05 over x ∈ [0, 50): OLS slope SE ≈ 0.05/(14.4·√400) ≈ 2e-4; Huber keeps a small outlier bias
      expectClose(r.slope, 0.75, loss === 'cauchy' ? 1e-3 : 3e-3, 'slope');
      expectClose(r.intercept, -1.5, loss === 'cauchy' ? 0.02 : 0.1, 'intercept');
      // the MAD over all residuals, 20 % outliers included, sits at the 0.8125 normal quantile instead of 0.75,
      // i.e. ≈ 1.32σ = 0.066 (plus the Huber line's own bias): accept 0.05–0.09
      expect(r.sigma).toBeGreaterThan(0.05);
      expect(r.sigma).toBeLessThan(0.09);
      expect(r.weights[0]!).toBeLessThan(0.05);
      expect(r.weights[1]!).toBeGreaterThan(0.5);
    });
  }
});

describe('two-sided CUSUM (Page 1954)', () => {
  it('with k = 0.5σ, h = 5σ: mean run length ≈ 10.4 after a 1σ shift and ≈ 465 in control', () => {
    // D. C. Montgomery, "Introduction to Statistical Quality Control", tabular CUSUM ARL table for h = 5, k = 0.5:
    // ARL₀ = 465, ARL at a 1σ shift = 10.4 — from memory. Monte Carlo SE: ~0.2 (shifted), ~30 (in control).
    const rng = createRng(66);
    const buf = new Float64Array(4000);
    let sumShift = 0;
    for (let k = 0; k < 300; k++) {
      for (let i = 0; i < 200; i++) buf[i] = 1 + gaussian(rng);
      const a = cusum(buf.subarray(0, 200), 0, 0.5, 5);
      sumShift += a.length ? a[0]!.index + 1 : 200;
    }
    expectClose(sumShift / 300, 10.4, 1.0, 'ARL at 1σ');
    let sum0 = 0;
    for (let k = 0; k < 200; k++) {
      for (let i = 0; i < 4000; i++) buf[i] = gaussian(rng);
      const a = cusum(buf, 0, 0.5, 5);
      sum0 += a.length ? a[0]!.index + 1 : 4000;
    }
    expectClose(sum0 / 200, 465, 120, 'ARL₀');
  });
  it('locates the onset of a downward shift and skips NaN', () => {
    const rng = createRng(67);
    const v = Float64Array.from({ length: 600 }, (_, i) => (i >= 350 ? -2 : 0) + 0.5 * gaussian(rng));
    v[100] = Number.NaN;
    const alarms = cusum(v, 0, 0.5, 5);
    const first = alarms.find((a) => a.index >= 350)!;
    expect(first.direction).toBe(-1);
    expect(Math.abs(first.onset - 350)).toBeLessThanOrEqual(3);
    expect(first.index - 350).toBeLessThan(10);
  });
});

describe('single step change by least squares (Hinkley 1970)', () => {
  it('finds a 0.8σ step at 137 of 400 samples within ±5 and its segment means', () => {
    const rng = createRng(68);
    const v = Float64Array.from({ length: 400 }, (_, i) => (i >= 137 ? 3.8 : 3) + gaussian(rng));
    const r = stepChange(v);
    if (!r.ok) throw new Error(r.reason);
    expect(Math.abs(r.index - 137)).toBeLessThanOrEqual(5);
    expectClose(r.meanBefore, 3, 0.3, 'mean before'); // SE ≈ 1/√137 ≈ 0.085
    expectClose(r.meanAfter, 3.8, 0.2, 'mean after'); // SE ≈ 1/√263 ≈ 0.06
    expect(r.tStatistic).toBeGreaterThan(5);
    expect(r.sseTwo).toBeLessThan(r.sseOne);
  });
  it('reports non-finite input and too-short series as values', () => {
    expect(stepChange(Float64Array.of(1, Number.NaN, 2, 3))).toEqual({ ok: false, reason: 'not-finite' });
    expect(stepChange(Float64Array.of(1, 2, 3), 2)).toEqual({ ok: false, reason: 'too-few-points' });
  });
});
