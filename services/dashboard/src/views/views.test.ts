import { describe, expect, it } from 'vitest';
import { buildFixtureReport } from '../../dev/fixture-report.ts';
import { filterFromParams } from './queue-view.ts';
import { scoreTrend } from './fleet-view.ts';
import { trimSummary } from './review-panel.ts';
import { createDraft, draftToInput } from './review-draft.ts';
import { labelFor, plotPlan } from './run-plots.ts';

describe('queue filters from the address bar', () => {
  it('defaults to the open queue sorted by priority', () => {
    expect(filterFromParams(new URLSearchParams(''))).toEqual({ sort: 'priority', limit: '50', reviewed: 'false' });
  });
  it('passes filters through and turns dates into whole UTC days', () => {
    const f = filterFromParams(new URLSearchParams('robot_id=heron-01&verdict=unfit&flag_kind=time-offset&from=2026-11-01&to=2026-11-30'));
    expect(f).toMatchObject({ robot_id: 'heron-01', verdict: 'unfit', flag_kind: 'time-offset', started_after: '2026-11-01T00:00:00Z', started_before: '2026-11-30T23:59:59Z' });
  });
  it('takes a page size from 1 to 500 and falls back to 50', () => {
    expect(filterFromParams(new URLSearchParams('limit=4')).limit).toBe('4');
    expect(filterFromParams(new URLSearchParams('limit=900')).limit).toBe('50');
    expect(filterFromParams(new URLSearchParams('limit=2.5')).limit).toBe('50');
  });
  it('shows every run newest first for reviewed=all and ignores malformed dates', () => {
    const f = filterFromParams(new URLSearchParams('reviewed=all&from=yesterday'));
    expect(f.reviewed).toBeUndefined();
    expect(f.sort).toBe('-received_at');
    expect(f.started_after).toBeUndefined();
  });
});

describe('review draft', () => {
  it('requires a decision', () => {
    const r = draftToInput(createDraft(['scale-drift-1']));
    expect(r.ok).toBe(false);
  });
  it('sends only the flags that got a disposition, with trimmed notes', () => {
    const d = createDraft(['scale-drift-1', 'loop-mismatch-1']);
    d.decision = 'accept-trimmed';
    d.note = '  cut aisle 4  ';
    d.flags.set('scale-drift-1', { disposition: 'upheld', note: ' blur ' });
    const r = draftToInput(d);
    expect(r).toEqual({ ok: true, input: { decision: 'accept-trimmed', note: 'cut aisle 4', flags: [{ flag_id: 'scale-drift-1', disposition: 'upheld', note: 'blur' }] } });
  });
});

describe('review draft carry-over', () => {
  it('keeps earlier flag dispositions for flags still in the report but not the decision', () => {
    const prev = { id: 1, run: 'r', decision: 'reject' as const, note: 'x', reviewer: 'lead', created_at: '2026-12-01T08:00:00Z', flags: [{ flag_id: 'scale-drift-1', disposition: 'dismissed' as const, note: 'lighting' }, { flag_id: 'gone-1', disposition: 'upheld' as const }] };
    const d = createDraft(['scale-drift-1', 'loop-mismatch-1'], prev);
    expect(d.decision).toBeNull();
    expect([...d.flags.entries()]).toEqual([
      ['scale-drift-1', { disposition: 'dismissed', note: 'lighting' }],
      ['loop-mismatch-1', { disposition: null, note: '' }],
    ]);
  });
});

describe('plot plan', () => {
  const rep = buildFixtureReport({ robotId: 'plover-01', runId: 'r', site: 'northgate-yard', startedAt: '2026-11-30T06:00:00Z', durationS: 3600, seed: 3, fault: 'scale' });
  it('orders known series first and IMU rates last', () => {
    expect(plotPlan(rep).map((p) => p.key)).toEqual(['scale', 'gravity_tilt_deg', 'rotation_residual_deg_s', 'time_offset_ms', 'gnss_error_m', 'imu_gyro_z_rad_s']);
  });
  it('shades a flag only on the plots that are evidence for it', () => {
    const plan = plotPlan(rep);
    expect(plan.find((p) => p.key === 'scale')!.flags.map((f) => f.id)).toEqual(['scale-drift-1']);
    expect(plan.find((p) => p.key === 'gravity_tilt_deg')!.flags).toEqual([]);
  });
  it('names run-wide flags instead of hatching the whole plot', () => {
    const wide = { ...rep.flags[0]!, id: 'scale-drift-9', t_start: 0, t_end: 3600 };
    const plan = plotPlan({ ...rep, flags: [...rep.flags, wide] });
    const scale = plan.find((p) => p.key === 'scale')!;
    expect(scale.flags.map((f) => f.id)).toEqual(['scale-drift-1']);
    expect(scale.runWide.map((f) => f.id)).toEqual(['scale-drift-9']);
  });
  it('labels unknown series from their key without the unit suffix', () => {
    expect(labelFor('imu_gyro_z_rad_s')).toBe('IMU gyro z');
    expect(labelFor('wheel_slip_pct')).toBe('Wheel slip');
  });
});

describe('fleet score trend', () => {
  it('compares the latest score with the mean of the earlier ones, 5-point dead band', () => {
    expect(scoreTrend([100, 60, 95])).toBe('improving'); // mean of earlier 80
    expect(scoreTrend([100, 100, 90])).toBe('worsening');
    expect(scoreTrend([80, 84])).toBe('steady');
    expect(scoreTrend([70])).toBe('none');
  });
});

describe('trimmed merge summary', () => {
  const seg = (severity: 'info' | 'warn' | 'critical', t0: number, t1: number, d0: number, d1: number) => ({ id: 's', t_start: t0, t_end: t1, distance_start_m: d0, distance_end_m: d1, severity, kinds: [], flag_ids: [] });
  it('lists the warning and critical segments and the share of path kept', () => {
    expect(trimSummary([seg('critical', 60, 100, 36, 65), seg('info', 0, 10, 0, 5), seg('warn', 130, 150, 90, 101)], 200)).toBe(
      'Trimmed merge cuts 2 segments (1:00–1:40, 2:10–2:30); 80 % of the 200 m path stays.', // (29 + 11) m of 200 m cut
    );
  });
  it('says when there is nothing to cut', () => {
    expect(trimSummary([seg('info', 0, 10, 0, 5)], 200)).toContain('no warning or critical segment');
  });
});
