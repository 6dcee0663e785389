import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, FLAG_KINDS, type Flag, type Severity } from '@plumbline/contracts';
import { buildFlags } from './flags.ts';
import { buildSegments, healthScore, verdictOf } from './score.ts';

const th = DEFAULT_POLICY.thresholds;
const DIST = 1000;

function flag(i: number, kind: number, sev: Severity, a: number, len: number): Flag {
  const k = FLAG_KINDS[kind % FLAG_KINDS.length]!;
  const s = Math.min(a, DIST), e = Math.min(DIST, a + len);
  return { id: `${k}-${i}`, kind: k, severity: sev, t_start: s, t_end: e, distance_start_m: s, distance_end_m: e, value: 1, threshold: 1, unit: 'm', message: '', check: '' };
}

const arbFlag = fc.record({
  kind: fc.nat(20), sev: fc.constantFrom<Severity>('info', 'warn', 'critical'), a: fc.double({ min: 0, max: DIST, noNaN: true }), len: fc.double({ min: 0, max: 400, noNaN: true }),
});
const score = (flags: Flag[]) => healthScore({ flags, distanceM: DIST, durationS: DIST }, th);
const up = (s: Severity): Severity => (s === 'info' ? 'warn' : 'critical');

describe('health score', () => {
  it('is 100 without flags and 0..100 always', () => {
    expect(score([])).toBe(100);
    fc.assert(fc.property(fc.array(arbFlag, { maxLength: 20 }), (xs) => {
      const s = score(xs.map((x, i) => flag(i, x.kind, x.sev, x.a, x.len)));
      return s >= 0 && s <= 100;
    }));
  });
  it('is monotone: adding a flag, lengthening one or raising its severity never raises the score (property test)', () => {
    fc.assert(fc.property(fc.array(arbFlag, { minLength: 1, maxLength: 15 }), arbFlag, fc.nat(), fc.double({ min: 0, max: 300, noNaN: true }), (xs, extra, pick, grow) => {
      const flags = xs.map((x, i) => flag(i, x.kind, x.sev, x.a, x.len));
      const base = score(flags);
      const j = pick % flags.length, x = xs[j]!;
      const added = score([...flags, flag(99, extra.kind, extra.sev, extra.a, extra.len)]);
      const longer = score(flags.map((f, i) => (i === j ? flag(i, x.kind, x.sev, x.a, x.len + grow) : f)));
      const worse = score(flags.map((f, i) => (i === j ? flag(i, x.kind, up(x.sev), x.a, x.len) : f)));
      return added <= base && longer <= base && worse <= base;
    }), { numRuns: 500 });
  });
  it('weighs a critical half of the run as documented: 100·(1 − 0.5) − 25 = 25', () => {
    expect(score([flag(1, FLAG_KINDS.indexOf('loop-drift'), 'critical', 0, 500)])).toBe(25);
    // warn over a quarter: 100·(1 − 0.5·0.25) − 5 = 82.5
    expect(score([flag(1, FLAG_KINDS.indexOf('scale-drift'), 'warn', 100, 250)])).toBe(82.5);
  });
});

describe('verdict and segments', () => {
  it('derives the verdict from the worst severity', () => {
    expect(verdictOf([])).toBe('sound');
    expect(verdictOf([flag(1, 0, 'info', 0, 1)])).toBe('sound');
    expect(verdictOf([flag(1, 0, 'info', 0, 1), flag(2, 1, 'warn', 0, 1)])).toBe('doubtful');
    expect(verdictOf([flag(1, 0, 'critical', 0, 1), flag(2, 1, 'warn', 0, 1)])).toBe('unfit');
  });
  it('merges overlapping and touching warn/critical flags, skipping info', () => {
    const flags = [flag(1, 0, 'warn', 0, 10), flag(2, 1, 'critical', 12, 10), flag(3, 2, 'info', 30, 10), flag(4, 3, 'warn', 100, 5)];
    const segs = buildSegments(flags, 5);
    expect(segs).toHaveLength(2);
    expect(segs[0]).toMatchObject({ t_start: 0, t_end: 22, severity: 'critical', flag_ids: [flags[0]!.id, flags[1]!.id] });
    expect(segs[1]).toMatchObject({ t_start: 100, t_end: 105, severity: 'warn' });
  });
});

describe('buildFlags', () => {
  it('applies thresholds with unit conversion, numbers ids in time order and words the flag', () => {
    const clock = { t0: 1000, distanceAt: (t: number) => (t - 1000) * 2 };
    const flags = buildFlags([
      { kind: 'time-offset', tStart: 1000, tEnd: 1100, value: 0.06, unit: 's' },
      { kind: 'gnss-divergence', tStart: 1050, tEnd: 1060, value: 3.1, unit: 'm' },
      { kind: 'gnss-divergence', tStart: 1020, tEnd: 1030, value: 1.0, unit: 'm' },
    ], th, clock);
    expect(flags.map((f) => [f.id, f.severity])).toEqual([['time-offset-1', 'critical'], ['gnss-divergence-1', 'info'], ['gnss-divergence-2', 'warn']]);
    expect(flags[0]!.value).toBeCloseTo(60, 9); // 0.06 s = 60 ms ≥ 50 ms critical (common practice)
    expect(flags[0]!.unit).toBe('ms');
    expect(flags[2]).toMatchObject({ t_start: 50, t_end: 60, distance_start_m: 100, distance_end_m: 120, threshold: 2 });
    expect(flags[2]!.message).toContain('3.1 m');
  });
});
