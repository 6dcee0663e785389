import { describe, expect, it } from 'vitest';
import type { OdometryColumns } from '@plumbline/bundle';
import { selectKeyframes, selectKeyframesBounded } from './keyframes.ts';
import { cumulativeDistance } from './path.ts';

/** Straight drive at 1 m/s, 20 Hz, for `seconds`: default spacing gives one keyframe per metre/second. */
function straight(seconds: number): { odo: OdometryColumns; dist: Float64Array } {
  const n = seconds * 20 + 1;
  const z = () => new Float64Array(n);
  const odo: OdometryColumns = { n, t: z(), x: z(), y: z(), z: z(), qw: z().fill(1), qx: z(), qy: z(), qz: z(), quality: null };
  for (let i = 0; i < n; i++) {
    odo.t[i] = i / 20;
    odo.x[i] = i / 20;
  }
  return { odo, dist: cumulativeDistance(odo) };
}

describe('selectKeyframesBounded on a short run', () => {
  it('keeps the default 1 m / 1 s spacing when under the budget', () => {
    const { odo, dist } = straight(100);
    const r = selectKeyframesBounded(odo, dist, [], 10_000);
    expect(r.spacing).toBe(1);
    expect(Array.from(r.keyframes)).toEqual(Array.from(selectKeyframes(odo, dist, [])));
    expect(r.keyframes.length).toBe(101); // 0..100 m every metre
  });
});

describe('selectKeyframesBounded on a long run', () => {
  it('thins to the budget, keeps loop ends and the first and last pose', () => {
    const { odo, dist } = straight(5000); // 5,001 keyframes at the default spacing
    const required = [7, 12345, 33333];
    const r = selectKeyframesBounded(odo, dist, required, 1000);
    expect(r.keyframes.length).toBeLessThanOrEqual(1000);
    // Not thinned far beyond need: at least 80 % of the budget (steps scale by a common factor, common practice).
    expect(r.keyframes.length).toBeGreaterThanOrEqual(800);
    expect(r.spacing).toBeGreaterThan(5);
    const set = new Set(r.keyframes);
    for (const i of [0, odo.n - 1, ...required]) expect(set.has(i)).toBe(true);
    for (let k = 1; k < r.keyframes.length; k++) expect(r.keyframes[k]!).toBeGreaterThan(r.keyframes[k - 1]!);
  });
});
