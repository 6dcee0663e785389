import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, type Flag, type Segment } from '@plumbline/contracts';
import { keepRanges, mergeGate, type MergeGateInput } from './merge-gate.ts';

function flag(id: string, kind: Flag['kind'], severity: Flag['severity'], t0: number, t1: number, value: number): Flag {
  return { id, kind, severity, t_start: t0, t_end: t1, distance_start_m: t0, distance_end_m: t1, value, threshold: null, unit: 'u', message: '', check: '' };
}
function segment(id: string, flags: Flag[]): Segment {
  const worst = flags.some((f) => f.severity === 'critical') ? 'critical' : flags.some((f) => f.severity === 'warn') ? 'warn' : 'info';
  return { id, t_start: Math.min(...flags.map((f) => f.t_start)), t_end: Math.max(...flags.map((f) => f.t_end)), distance_start_m: 0, distance_end_m: 0, severity: worst, kinds: [...new Set(flags.map((f) => f.kind))], flag_ids: flags.map((f) => f.id) };
}
const poseJump = flag('pose-jump-1', 'pose-jump', 'critical', 40, 45, 1.5); // 1.5 m ≥ 1 m critical (default policy)
const offset = flag('time-offset-1', 'time-offset', 'warn', 70, 80, 25); // 25 ms: warn (10 ≤ 25 < 50)
const report = (flags: Flag[]): MergeGateInput['report'] => ({
  flags,
  segments: flags.map((f, i) => segment(`segment-${i + 1}`, [f])),
  run: { robot_id: 'kestrel-01', run_id: 'r1', site: 'harbourside-depot', started_at: '2026-03-02T08:00:00Z', t0: 0, duration_s: 120, distance_m: 100 },
});
const input = (over: Partial<MergeGateInput>): MergeGateInput => ({ run: 'run-a', status: 'done', report: report([]), review: null, thresholds: null, ...over });

describe('unreviewed runs', () => {
  it('a sound run is ready as a whole', () => {
    expect(mergeGate(input({}))).toMatchObject({ ready: true, state: 'ready', verdict: 'sound', keep: [{ t_start: 0, t_end: 120 }] });
  });
  it('a doubtful or unfit run needs a review', () => {
    const a = mergeGate(input({ report: report([offset]) }));
    expect(a).toMatchObject({ ready: false, state: 'needs-review', verdict: 'doubtful', keep: [] });
    expect(mergeGate(input({ report: report([poseJump, offset]) }))).toMatchObject({ state: 'needs-review', verdict: 'unfit' });
  });
  it('is judged under the requested policy: a looser time-offset threshold makes the run sound', () => {
    const loose = { ...DEFAULT_POLICY.thresholds, 'time-offset': { warn: 30, critical: 60, unit: 'ms' } };
    expect(mergeGate(input({ report: report([offset]), thresholds: loose }))).toMatchObject({ ready: true, state: 'ready', verdict: 'sound' });
  });
  it('a run without a report is not analysed', () => {
    expect(mergeGate(input({ status: 'failed', report: null }))).toMatchObject({ ready: false, state: 'not-analysed' });
  });
});

describe('reviewed runs', () => {
  it('accept -> ready whole; reject and rerun -> not ready', () => {
    const r = report([poseJump]);
    expect(mergeGate(input({ report: r, review: { decision: 'accept', flags: [] } }))).toMatchObject({ ready: true, state: 'ready', keep: [{ t_start: 0, t_end: 120 }] });
    expect(mergeGate(input({ report: r, review: { decision: 'reject', flags: [] } }))).toMatchObject({ ready: false, state: 'not-ready' });
    expect(mergeGate(input({ report: r, review: { decision: 'rerun', flags: [] } }))).toMatchObject({ ready: false, state: 'not-ready' });
  });
  it('accept-trimmed cuts critical and upheld segments and keeps the rest', () => {
    const a = mergeGate(input({ report: report([poseJump, offset]), review: { decision: 'accept-trimmed', flags: [{ flag_id: 'time-offset-1', disposition: 'upheld' }] } }));
    expect(a).toMatchObject({ ready: true, state: 'ready-trimmed' });
    expect(a.cut.map((c) => c.segment_id)).toEqual(['segment-1', 'segment-2']);
    expect(a.keep).toEqual([{ t_start: 0, t_end: 40 }, { t_start: 45, t_end: 70 }, { t_start: 80, t_end: 120 }]);
  });
  it('a dismissed critical flag is not cut; an undisposed warning is not cut', () => {
    const a = mergeGate(input({ report: report([poseJump, offset]), review: { decision: 'accept-trimmed', flags: [{ flag_id: 'pose-jump-1', disposition: 'dismissed' }] } }));
    expect(a.cut).toEqual([]);
    expect(a.keep).toEqual([{ t_start: 0, t_end: 120 }]);
  });
  it('nothing left after cutting is not ready', () => {
    const whole = flag('units-1', 'units', 'critical', 0, 120, 56);
    expect(mergeGate(input({ report: report([whole]), review: { decision: 'accept-trimmed', flags: [] } }))).toMatchObject({ ready: false, state: 'not-ready', keep: [] });
  });
});

describe('keepRanges', () => {
  it('subtracts overlapping and out-of-span cuts', () => {
    expect(keepRanges(100, [{ t_start: 50, t_end: 60 }, { t_start: -5, t_end: 10 }, { t_start: 55, t_end: 70 }, { t_start: 95, t_end: 200 }])).toEqual([
      { t_start: 10, t_end: 50 },
      { t_start: 70, t_end: 95 },
    ]);
  });
});
