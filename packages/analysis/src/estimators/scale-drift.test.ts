import { describe, expect, it } from 'vitest';
import { findScaleSteps, type StepLocator } from './scale-drift.ts';

const WINDOW_S = 10;

/** Window scales every 5 s (10-s windows, 50 % overlap) with one 10 % scale step at `stepT`. */
function stepSeries(stepT: number): { t: Float64Array; value: Float64Array; sigma: Float64Array } {
  const n = 200;
  const t = new Float64Array(n), value = new Float64Array(n), sigma = new Float64Array(n).fill(0.002);
  for (let w = 0; w < n; w++) {
    t[w] = 5 + 5 * w;
    value[w] = t[w]! < stepT ? 1 : 1.1;
  }
  return { t, value, sigma };
}

const locatorAt = (offsetS: number): StepLocator => (t0, t1, before, after) => ({
  t: 0.5 * (t0 + t1) + offsetS, sigmaS: 1, before, after, stepPct: (after / before - 1) * 100,
});

describe('findScaleSteps: a step located at the candidate', () => {
  it('reports the step once', () => {
    const steps = findScaleSteps(stepSeries(500), WINDOW_S, locatorAt(0));
    expect(steps.length).toBe(1);
    expect(Math.abs(steps[0]!.t - 500)).toBeLessThanOrEqual(WINDOW_S);
  });
});

describe('findScaleSteps: a step located more than a window from its candidate', () => {
  it('reports no step time twice', () => {
    // The located step does not block the candidate's own window groups; before the fix the same candidate and the
    // same location came back on every pass (up to the 50-pass limit).
    const steps = findScaleSteps(stepSeries(500), WINDOW_S, locatorAt(2.2 * WINDOW_S));
    const times = steps.map((s) => s.t);
    expect(steps.length).toBeGreaterThan(0);
    expect(new Set(times).size).toBe(times.length);
    for (let i = 1; i < times.length; i++) expect(times[i]! - times[i - 1]!).toBeGreaterThan(WINDOW_S / 2);
  });
});
