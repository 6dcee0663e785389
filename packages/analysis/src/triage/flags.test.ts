import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY } from '@plumbline/contracts';
import { buildFlags, INFO_FRACTION } from './flags.ts';

const th = DEFAULT_POLICY.thresholds;
const clock = { t0: 0, distanceAt: (t: number) => t };

describe('info flags', () => {
  it('lists a value below the warning level only from INFO_FRACTION of it on, worded as within tolerance', () => {
    // extrinsic-rotation warns from 2° (default policy): 0.002° is no finding, 1.2° is approaching the limit.
    const flags = buildFlags([
      { kind: 'extrinsic-rotation', tStart: 0, tEnd: 10, value: 0.002217, unit: 'deg' },
      { kind: 'extrinsic-rotation', tStart: 20, tEnd: 30, value: 1.2, unit: 'deg' },
      { kind: 'extrinsic-rotation', tStart: 40, tEnd: 50, value: 2.5, unit: 'deg' },
    ], th, clock);
    expect(INFO_FRACTION).toBe(0.5);
    expect(flags.map((f) => [f.id, f.severity, f.t_start])).toEqual([['extrinsic-rotation-1', 'info', 20], ['extrinsic-rotation-2', 'warn', 40]]);
    expect(flags[0]!.message).toBe('IMU-to-odometry rotation vs calibration 1.2 deg: within tolerance, approaching the limit (warning from 2 deg).');
    expect(flags[0]!.threshold).toBe(2);
    expect(flags[1]!.message).toContain('differs from the calibration by 2.5 deg');
  });

  it('compares in the policy unit (0.004 s = 4 ms is under half of the 10 ms warning; 6 ms is listed)', () => {
    const flags = buildFlags([
      { kind: 'time-offset', tStart: 0, tEnd: 10, value: 0.004, unit: 's' },
      { kind: 'time-offset', tStart: 20, tEnd: 30, value: 0.006, unit: 's' },
    ], th, clock);
    expect(flags).toHaveLength(1);
    expect(flags[0]!.value).toBeCloseTo(6, 9);
  });

  it('always lists kinds without thresholds (unobservable) and findings without a value', () => {
    const flags = buildFlags([
      { kind: 'unobservable', tStart: 0, tEnd: 30, value: 30, unit: 's', detail: 'scale: unobservable' },
      { kind: 'pose-jump', tStart: 40, tEnd: 41, value: null, unit: 'm' },
    ], th, clock);
    expect(flags.map((f) => f.kind)).toEqual(['unobservable', 'pose-jump']);
    expect(flags[0]!.message).toContain('Not a fault');
  });
});

describe('loop-mismatch wording', () => {
  it('states the χ², the gate with its confidence and the degrees of freedom', () => {
    // 12.592 = upper 5 % point of χ² with 6 dof (NIST/SEMATECH e-Handbook §1.3.6.7.4).
    const [f] = buildFlags([
      { kind: 'loop-mismatch', tStart: 40, tEnd: 60, value: 476 / 12.592, unit: 'chi2/gate', params: { chi2: 476, gate: 12.592, dof: 6, confidencePct: 95 } },
    ], th, clock);
    expect(f!.severity).toBe('critical');
    expect(f!.message).toBe('A loop closure contradicts the odometry (χ² 476 against a 95 % gate of 12.59 for 6 dof) and was excluded; merged as is, it would fold the map.');
  });
});
