import { describe, expect, it } from 'vitest';
import { Report } from '@plumbline/contracts';
import { buildFixtureReport } from '../dev/fixture-report.ts';

describe('dashboard fixture report', () => {
  it('validates against the Report contract for every fault and site', () => {
    for (const fault of ['clean', 'scale', 'offset'] as const) {
      for (const site of ['harbourside-depot', 'northgate-yard'] as const) {
        const rep = buildFixtureReport({ robotId: 'kestrel-01', runId: `r-${fault}`, site, startedAt: '2026-11-30T06:00:00Z', durationS: 3600, seed: 7, fault });
        const parsed = Report.safeParse(rep);
        expect(parsed.success, parsed.success ? '' : JSON.stringify(parsed.error.issues.slice(0, 3))).toBe(true);
      }
    }
  });

  it('marks the scale fault as a critical flag with one rejected loop', () => {
    const rep = buildFixtureReport({ robotId: 'kestrel-01', runId: 'r1', site: 'harbourside-depot', startedAt: '2026-11-30T06:00:00Z', durationS: 3600, seed: 1, fault: 'scale' });
    expect(rep.verdict).toBe('unfit');
    expect(rep.flags.map((f) => f.kind)).toEqual(['scale-drift', 'loop-mismatch']);
    expect(rep.loops.filter((l) => !l.accepted)).toHaveLength(1);
    // 1.1 m/s for 3600 s along the lap polyline: distance must be close to 3960 m (sampling cuts corners slightly).
    expect(rep.run.distance_m).toBeGreaterThan(3800);
    expect(rep.run.distance_m).toBeLessThan(3970);
  });
});
