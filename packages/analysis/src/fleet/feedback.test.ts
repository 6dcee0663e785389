import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, type FlagDisposition, type ReviewedFlag } from '@plumbline/contracts';
import { feedbackCells, feedbackReport, suggestThreshold } from './feedback.ts';

const flag = (value: number, disposition: FlagDisposition, site = 'harbourside-depot'): ReviewedFlag => ({ kind: 'time-offset', site, value, disposition });

/** mulberry32: a small deterministic PRNG so the random history is the same on every run (common practice). */
function seeded(seed: number) {
  let a = seed >>> 0;
  const next = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return { range: (lo: number, hi: number) => lo + (hi - lo) * next() };
}

describe('suggestThreshold on a hand-worked history', () => {
  // Dismissed at 21, 22, 24, 26, 29 and 35 ms; upheld at 31, 33, 40, 45, 50, 60, 70, 80, 90 ms. Target 10 %:
  // cut 30 ms keeps 9 upheld + 1 dismissed (35) = 10 % ✓; cut 27.5 ms keeps 9 + 2 = 18 % ✗. Worked by hand.
  const history = [21, 22, 24, 26, 29, 35].map((v) => flag(v, 'dismissed')).concat([31, 33, 40, 45, 50, 60, 70, 80, 90].map((v) => flag(v, 'upheld')));
  it('finds the lowest cut meeting the target, with the evidence', () => {
    const s = suggestThreshold('time-offset', history, { warn: 20, unit: 'ms' }, { targetDismissedRate: 0.1 });
    expect(s).toMatchObject({ ok: true, suggested_warn: 30, upheld_kept: 9, upheld_total: 9, dismissed_kept: 1, dismissed_total: 6, current_warn: 20 });
  });
  it('with a 0 % target cuts above the last dismissed flag and loses the upheld ones below it', () => {
    const s = suggestThreshold('time-offset', history, { warn: 20, unit: 'ms' }, { targetDismissedRate: 0 });
    expect(s).toMatchObject({ ok: true, suggested_warn: 37.5, upheld_kept: 7, dismissed_kept: 0 });
  });
  it('keeps the current level when it already meets a loose target', () => {
    const s = suggestThreshold('time-offset', history, { warn: 20, unit: 'ms' }, { targetDismissedRate: 0.5 });
    expect(s).toMatchObject({ ok: true, suggested_warn: 21, upheld_kept: 9, dismissed_kept: 6 });
  });
  it('refuses with too little history or nothing upheld', () => {
    expect(suggestThreshold('time-offset', history.slice(0, 3), { warn: 20, unit: 'ms' })).toMatchObject({ ok: false, suggested_warn: null });
    expect(suggestThreshold('time-offset', history.slice(0, 6), { warn: 20, unit: 'ms' }).reason).toMatch(/no upheld/);
  });
});

describe('suggestThreshold on a randomised history with a known boundary', () => {
  it('recovers the boundary between false alarms (< 3°) and real faults (> 3.4°) within the sampling gap', () => {
    const rng = seeded(42);
    const flags: ReviewedFlag[] = [];
    for (let i = 0; i < 200; i++) flags.push({ kind: 'extrinsic-rotation', site: 'northgate-yard', value: rng.range(2, 3), disposition: 'dismissed' });
    for (let i = 0; i < 100; i++) flags.push({ kind: 'extrinsic-rotation', site: 'northgate-yard', value: rng.range(3.4, 8), disposition: 'upheld' });
    const s = suggestThreshold('extrinsic-rotation', flags, { warn: 2, unit: 'deg' }, { targetDismissedRate: 0 });
    // Any cut in (max dismissed, min upheld) is perfect; the midpoint lies inside (3, 3.4). Tolerance from the gap.
    expect(s.ok).toBe(true);
    expect(s.suggested_warn!).toBeGreaterThan(3);
    expect(s.suggested_warn!).toBeLessThan(3.4);
    expect(s).toMatchObject({ upheld_kept: 100, dismissed_kept: 0 });
    // At a 5 % target the cut may keep 5 of the dismissed flags (5/105 = 4.8 %; 6/106 = 5.7 % would not do): it lies
    // between the 6th and the 5th largest dismissed value. Worked by hand from the rule.
    const loose = suggestThreshold('extrinsic-rotation', flags, { warn: 2, unit: 'deg' }, { targetDismissedRate: 0.05 });
    const dismissed = flags.filter((f) => f.disposition === 'dismissed').map((f) => f.value!).sort((a, b) => b - a);
    expect(loose).toMatchObject({ ok: true, upheld_kept: 100, dismissed_kept: 5 });
    expect(loose.suggested_warn!).toBeCloseTo((dismissed[4]! + dismissed[5]!) / 2, 12);
  });
});

describe('feedbackCells', () => {
  it('counts dispositions and precision per kind and per site', () => {
    const flags = [flag(25, 'upheld'), flag(26, 'dismissed'), flag(30, 'upheld', 'northgate-yard'), flag(40, 'rerun-needed', 'northgate-yard')];
    const { byKind, byKindSite } = feedbackCells(flags);
    expect(byKind).toEqual([{ kind: 'time-offset', site: null, upheld: 2, dismissed: 1, rerun_needed: 1, precision: 2 / 3 }]);
    expect(byKindSite.map((c) => [c.site, c.precision])).toEqual([['harbourside-depot', 0.5], ['northgate-yard', 1]]);
    const report = feedbackReport(flags, DEFAULT_POLICY.thresholds);
    expect(report.suggestions[0]).toMatchObject({ kind: 'time-offset', ok: false });
  });
});
