import { describe, expect, it } from 'vitest';
import { niceTicks, timeTicks } from './canvas-util.ts';
import { indexAtTime } from './cursor.ts';
import { pathBounds } from './map-view.ts';
import { valueRange } from './time-plot.ts';

describe('niceTicks', () => {
  // Steps of 1, 2 or 5 × 10^k: Heckbert, "Nice numbers for graph labels", Graphics Gems (1990) — from memory.
  it('picks 1-2-5 steps covering the range', () => {
    expect(niceTicks(0, 1, 5)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(niceTicks(0.97, 1.06, 5)).toEqual([0.98, 1, 1.02, 1.04, 1.06]);
    expect(niceTicks(0.97, 1.06, 3)).toEqual([1, 1.05]);
    expect(niceTicks(-3, 7, 2)).toEqual([0, 5]);
  });
  it('returns the single value of an empty range', () => {
    expect(niceTicks(2, 2, 4)).toEqual([2]);
  });
});

describe('timeTicks', () => {
  it('steps at whole clock units', () => {
    expect(timeTicks(4200, 8)).toEqual([0, 600, 1200, 1800, 2400, 3000, 3600, 4200]);
    expect(timeTicks(8 * 3600, 8)).toEqual([0, 3600, 7200, 10800, 14400, 18000, 21600, 25200, 28800]);
    expect(timeTicks(50, 5)).toEqual([0, 10, 20, 30, 40, 50]);
  });
});

describe('indexAtTime', () => {
  const ts = [0, 1, 2, 5, 9];
  it('returns the last index at or before t', () => {
    expect(indexAtTime(ts, 0)).toBe(0);
    expect(indexAtTime(ts, 4.99)).toBe(2);
    expect(indexAtTime(ts, 5)).toBe(3);
    expect(indexAtTime(ts, 100)).toBe(4);
    expect(indexAtTime(ts, -3)).toBe(0);
    expect(indexAtTime([], 1)).toBe(-1);
  });
  it('agrees with a linear scan on a long series', () => {
    const long = Array.from({ length: 10_000 }, (_, i) => i * 0.37);
    for (const t of [0.1, 17.3, 1234.5, 3699.99]) {
      let lin = 0;
      while (lin + 1 < long.length && long[lin + 1]! <= t) lin++;
      expect(indexAtTime(long, t)).toBe(lin);
    }
  });
});

describe('ranges', () => {
  it('pads the value range by 8 % and includes the sigma band', () => {
    const [lo, hi] = valueRange({ unit: 'm', t: [0, 1, 2], v: [1, null, 2], sigma: [0.5, null, 0] });
    expect(lo).toBeCloseTo(0.5 - 0.12, 12);
    expect(hi).toBeCloseTo(2 + 0.12, 12);
  });
  it('opens a unit window around a flat series and falls back to [0, 1] with no values', () => {
    expect(valueRange({ unit: '', t: [0, 1], v: [3, 3] })).toEqual([2.5, 3.5]);
    expect(valueRange({ unit: '', t: [0], v: [null] })).toEqual([0, 1]);
  });
  it('bounds every path given and skips missing ones', () => {
    const p = { frame: 'enu', t: [0, 1], x: [-2, 5], y: [1, 3], z: [0, 0] };
    const q = { frame: 'enu', t: [0], x: [7], y: [-4], z: [0] };
    expect(pathBounds([p, null, q])).toEqual([-2, -4, 7, 3]);
  });
});

describe('map stretches', () => {
  it('draws segments with their flag ids and adds flags outside any segment', async () => {
    const { buildFixtureReport } = await import('../../dev/fixture-report.ts');
    const { mapStretches } = await import('./map-view.ts');
    const rep = buildFixtureReport({ robotId: 'kestrel-01', runId: 'r', site: 'harbourside-depot', startedAt: '2026-11-30T06:00:00Z', durationS: 3600, seed: 2, fault: 'scale' });
    const flags = rep.flags.slice(0, 2);
    const merged = { ...rep, segments: [{ id: 'segment-1', t_start: 10, t_end: 20, distance_start_m: 5, distance_end_m: 9, severity: 'critical' as const, kinds: ['scale-drift' as const], flag_ids: ['a-1', 'a-2', 'a-3', flags[0]!.id] }], flags };
    expect(mapStretches(merged)).toEqual([
      { t_start: 10, t_end: 20, severity: 'critical', label: 'a-1, a-2 +2' },
      { t_start: flags[1]!.t_start, t_end: flags[1]!.t_end, severity: flags[1]!.severity, label: flags[1]!.id },
    ]);
  });
});

describe('threshold rules', () => {
  it('keeps thresholds in the series unit and widens the range to show them', async () => {
    const { plotThresholds } = await import('./time-plot.ts');
    const series = { unit: 'ms', t: [0, 1], v: [5, 8] };
    const f = (threshold: number | null, unit: string) => ({ id: 'x', kind: 'time-offset' as const, severity: 'warn' as const, t_start: 0, t_end: 1, distance_start_m: 0, distance_end_m: 1, value: 38, threshold, unit, message: '', check: '' });
    const th = plotThresholds(series, [f(20, 'ms'), f(20, 'ms'), f(2, '%'), f(null, 'ms')]);
    expect(th).toEqual([20]);
    const [lo, hi] = valueRange(series, th);
    expect(lo).toBeCloseTo(5 - 15 * 0.08, 12);
    expect(hi).toBeCloseTo(20 + 15 * 0.08, 12);
  });
});
