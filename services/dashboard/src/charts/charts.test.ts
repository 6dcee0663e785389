import { describe, expect, it } from 'vitest';
import { niceTicks, timeTicks } from './canvas-util.ts';
import { indexAtTime } from './cursor.ts';
import { alignForDisplay, isRunWide, pathBounds, transformPath } from './map-data.ts';
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
    const { mapStretches } = await import('./map-data.ts');
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

describe('GNSS display alignment', () => {
  // Umeyama's worked example (IEEE TPAMI 13(4), 1991 — from memory; re-derived numerically in CHECK-VALUES):
  // X = {(0,0),(1,0),(0,2)} onto Y = {(0,0),(−1,0),(0,2)} gives R = [[0.8321, 0.5547],[−0.5547, 0.8321]].
  // The rotation does not depend on the scale, so the rigid fit must find the same R; tolerance 1e-4 = table rounding.
  const g = { frame: 'enu', t: [0, 1, 2], x: [0, 1, 0], y: [0, 0, 2], z: [0, 0, 0], fix: [4, 4, 4] };
  const p = { frame: 'odometry-world', t: [0, 1, 2], x: [0, -1, 0], y: [0, 0, 2], z: [0, 0, 0] };
  it('recovers the rotation of the worked example', () => {
    const r = alignForDisplay(g, p)!;
    expect(Math.cos(r.thetaRad)).toBeCloseTo(0.8321, 4);
    expect(Math.sin(r.thetaRad)).toBeCloseTo(-0.5547, 4);
    // Rigid fit: the GNSS centroid lands on the path centroid (exact up to rounding, 1e-12).
    const moved = transformPath(g, r);
    expect(moved.x.reduce((a, b) => a + b, 0) / 3).toBeCloseTo(-1 / 3, 12);
    expect(moved.y.reduce((a, b) => a + b, 0) / 3).toBeCloseTo(2 / 3, 12);
  });
  it('undoes a known rotation and shift exactly', () => {
    const th = 0.7;
    const src = { frame: 'enu', t: [0, 1, 2, 3], x: [0, 4, 4, 0], y: [0, 0, 3, 3], z: [0, 0, 0, 0], fix: [4, 4, 1, 4] };
    const dst = transformPath({ ...src, frame: 'odometry-world' }, { thetaRad: th, tx: 12, ty: -5, pairs: 4 });
    const r = alignForDisplay(src, dst)!;
    expect(r.thetaRad).toBeCloseTo(th, 12);
    expect(r.tx).toBeCloseTo(12, 10);
    expect(r.ty).toBeCloseTo(-5, 10);
  });
  it('is not tilted by a diverging stretch of fixes', () => {
    // A 10 × 10 square walked in 40 fixes with small alternating noise; 6 consecutive fixes pushed 4 m sideways.
    const n = 40;
    const gx: number[] = [];
    const gy: number[] = [];
    for (let i = 0; i < n; i++) {
      const s = (i / n) * 40;
      const side = Math.floor(s / 10);
      const u = s - side * 10;
      const pt = [[u, 0], [10, u], [10 - u, 10], [0, 10 - u]][side]!;
      gx.push(pt[0]! + (i % 2 ? 0.02 : -0.02));
      gy.push(pt[1]! + (i >= 12 && i < 18 ? 4 : 0));
    }
    const src = { frame: 'enu', t: gx.map((_, i) => i), x: gx, y: gy, z: gx.map(() => 0), fix: gx.map(() => 4) };
    const truth = { thetaRad: -0.4, tx: 3, ty: 1, pairs: n };
    const clean = transformPath({ ...src, y: gy.map((y, i) => (i >= 12 && i < 18 ? y - 4 : y)), frame: 'odometry-world' }, truth);
    const r = alignForDisplay(src, clean)!;
    // Tolerance 0.01 rad (0.6°): the ±2 cm noise on a 10 m square allows a few mrad; a single plain fit is off by 5.2° here.
    expect(Math.abs(r.thetaRad - truth.thetaRad)).toBeLessThan(0.01);
    expect(r.pairs).toBe(n - 6);
  });
  it('refuses fewer than three usable fixes (fix quality 0 is unusable)', () => {
    expect(alignForDisplay({ ...g, fix: [4, 0, 4] }, p)).toBeNull();
  });
});

describe('run-wide findings', () => {
  it('treats flags covering 90 % of the run as run-level', () => {
    expect(isRunWide({ t_start: 0, t_end: 240 }, 240)).toBe(true);
    expect(isRunWide({ t_start: 10, t_end: 200 }, 240)).toBe(false);
  });
  it('keeps info notes and run-wide flags off the map', async () => {
    const { buildFixtureReport } = await import('../../dev/fixture-report.ts');
    const { mapStretches } = await import('./map-data.ts');
    const rep = buildFixtureReport({ robotId: 'kestrel-01', runId: 'r', site: 'harbourside-depot', startedAt: '2026-11-30T06:00:00Z', durationS: 3600, seed: 2, fault: 'clean' });
    const f = (id: string, severity: 'info' | 'warn', t_start: number, t_end: number) => ({ id, kind: 'units' as const, severity, t_start, t_end, distance_start_m: 0, distance_end_m: 1, value: 1, threshold: 1, unit: '', message: '', check: '' });
    const withFlags = { ...rep, segments: [], flags: [f('units-1', 'warn', 0, 3600), f('units-2', 'info', 100, 200), f('units-3', 'warn', 100, 200)] };
    expect(mapStretches(withFlags).map((s) => s.label)).toEqual(['units-3']);
  });
});
