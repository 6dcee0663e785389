import { describe, it, expect } from 'vitest';
import { lttb } from './lttb.ts';
import { createRng, gaussian } from './testing.ts';

/**
 * Independent transcription of the LTTB pseudo-code in S. Steinarsson, "Downsampling Time Series for Visual
 * Representation", 2013 (array-of-points style, halved areas), used as the reference for NaN-free data.
 */
function referenceLttb(points: [number, number][], threshold: number): number[] {
  const n = points.length;
  if (threshold >= n || threshold === 0) return points.map((_, i) => i);
  const every = (n - 2) / (threshold - 2);
  const sampled = [0];
  let a = 0;
  for (let i = 0; i < threshold - 2; i++) {
    let avgX = 0, avgY = 0;
    let avgStart = Math.floor((i + 1) * every) + 1;
    let avgEnd = Math.floor((i + 2) * every) + 1;
    avgEnd = avgEnd < n ? avgEnd : n;
    const avgLen = avgEnd - avgStart;
    for (; avgStart < avgEnd; avgStart++) {
      avgX += points[avgStart]![0];
      avgY += points[avgStart]![1];
    }
    avgX /= avgLen;
    avgY /= avgLen;
    let rangeOffs = Math.floor(i * every) + 1;
    const rangeTo = Math.floor((i + 1) * every) + 1;
    const [pax, pay] = points[a]!;
    let maxArea = -1, next = 0;
    for (; rangeOffs < rangeTo; rangeOffs++) {
      const area = Math.abs((pax - avgX) * (points[rangeOffs]![1] - pay) - (pax - points[rangeOffs]![0]) * (avgY - pay)) * 0.5;
      if (area > maxArea) {
        maxArea = area;
        next = rangeOffs;
      }
    }
    sampled.push(next);
    a = next;
  }
  sampled.push(n - 1);
  return sampled;
}

function series(n: number, seed: number): { x: Float64Array; y: Float64Array } {
  const rng = createRng(seed);
  const x = Float64Array.from({ length: n }, (_, i) => i * 0.01);
  const y = Float64Array.from(x, (t) => Math.sin(t) + 0.1 * gaussian(rng));
  return { x, y };
}

describe('lttb against the published pseudo-code', () => {
  it('selects the same indices as a direct transcription on 50 random series', () => {
    for (let k = 0; k < 50; k++) {
      const { x, y } = series(500 + 37 * k, 70 + k);
      const m = 3 + ((k * 13) % 150);
      const ref = referenceLttb(Array.from(x, (xi, i) => [xi, y[i]!] as [number, number]), m);
      expect(Array.from(lttb(x, y, m))).toEqual(ref);
    }
  });
});

describe('lttb properties', () => {
  it('returns exactly the requested count, ascending, with first, last and both spikes kept', () => {
    const { x, y } = series(10000, 71);
    y[4321] = 50;
    y[7777] = -50;
    const idx = lttb(x, y, 200);
    expect(idx.length).toBe(200);
    for (let i = 1; i < idx.length; i++) expect(idx[i]!).toBeGreaterThan(idx[i - 1]!);
    expect(idx[0]).toBe(0);
    expect(idx[199]).toBe(9999);
    expect(Array.from(idx)).toContain(4321);
    expect(Array.from(idx)).toContain(7777);
  });
  it('returns every index when the count is not below the length', () => {
    const { x, y } = series(50, 72);
    expect(Array.from(lttb(x, y, 80))).toEqual(Array.from({ length: 50 }, (_, i) => i));
  });
  it('keeps NaN gaps visible: run ends kept, one NaN marker per gap, exact count', () => {
    const { x, y } = series(5000, 73);
    for (let i = 2000; i < 2300; i++) y[i] = Number.NaN;
    for (let i = 4000; i < 4010; i++) y[i] = Number.NaN;
    y[0] = Number.NaN; // leading NaN needs no marker
    const idx = Array.from(lttb(x, y, 150));
    expect(idx.length).toBe(150);
    for (const must of [1, 1999, 2000, 2300, 3999, 4000, 4010, 4999]) expect(idx).toContain(must);
    expect(idx.filter((i) => Number.isNaN(y[i]!))).toEqual([2000, 4000]);
    // budget split by run length: the three runs hold 1999, 1700 and 990 points
    const inRun = (lo: number, hi: number): number => idx.filter((i) => i >= lo && i <= hi).length;
    expect(inRun(1, 1999)).toBeGreaterThan(inRun(2300, 3999));
    expect(inRun(2300, 3999)).toBeGreaterThan(inRun(4010, 4999));
  });
  it('bridges gaps when the budget is below two points per run, and pads an oversized budget', () => {
    const x = Float64Array.from({ length: 20 }, (_, i) => i);
    const y = Float64Array.from(x, (v) => (v % 3 === 2 ? Number.NaN : v));
    const small = lttb(x, y, 4);
    expect(small.length).toBe(4);
    expect(Array.from(small).every((i) => !Number.isNaN(y[i]!))).toBe(true);
    const big = lttb(x, y, 19); // 14 finite + gap markers < 19: padded with unused indices
    expect(big.length).toBe(19);
    expect(new Set(big).size).toBe(19);
  });
});
