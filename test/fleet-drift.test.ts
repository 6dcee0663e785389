/**
 * Calibration drift across runs, end to end on simulated shifts: a fleet of five robots × 30 shifts of 90 s, each
 * shift simulated and analysed once (nothing cached), then the drift detector replayed on every prefix of each
 * robot's runs as the worker would after each new run.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeRun, maintenanceFindings, type RunEstimates } from '@plumbline/analysis';
import type { CalibrationMetric, MaintenanceFinding, RunManifest } from '@plumbline/contracts';
import { DRIFTING_FLEET, driftingFleetShifts, simulateDriftShift, type DriftKind } from '@plumbline/simulator';

const SHIFTS = 30;
/** The promise of the detector on this fleet: a drift is reported within this many runs after it starts. */
const MAX_DELAY_RUNS = 8;
const METRIC_OF: Record<Exclude<DriftKind, 'none'>, CalibrationMetric> = {
  'extrinsic-creep': 'extrinsic_rotation_deg',
  'gyro-bias-growth': 'gyro_bias_rad_s',
  'clock-drift': 'time_offset_ms',
};

const runsByRobot = new Map<string, RunEstimates[]>();
/** findings[robot][k] = findings after the first k runs. */
const findingsByRobot = new Map<string, MaintenanceFinding[][]>();

beforeAll(() => {
  for (const s of driftingFleetShifts({ shifts: SHIFTS, durationS: 90 })) {
    const sim = simulateDriftShift(s);
    const report = analyzeRun({ manifest: sim.manifest as RunManifest, imu: sim.imu, odometry: sim.odometry, gnss: null, loops: sim.loops });
    const list = runsByRobot.get(s.robot.robot) ?? [];
    list.push({ run: s.spec.runId, started_at: s.spec.startedAt, estimates: report.estimates });
    runsByRobot.set(s.robot.robot, list);
  }
  for (const [robot, runs] of runsByRobot) {
    // As the worker does: the metrics with an open finding after the previous run are held with relaxed limits.
    const perPrefix: MaintenanceFinding[][] = [];
    for (let i = 0; i < runs.length; i++) {
      const open = new Set((perPrefix[i - 1] ?? []).map((f) => f.metric));
      perPrefix.push(maintenanceFindings(robot, runs.slice(0, i + 1), '2026-11-01T00:00:00.000Z', { open }));
    }
    findingsByRobot.set(robot, perPrefix);
  }
}, 300_000);

describe.each(DRIFTING_FLEET.filter((r) => r.drift !== 'none'))('$robot ($drift from shift $startShift)', (robot) => {
  const metric = METRIC_OF[robot.drift as Exclude<DriftKind, 'none'>];
  it(`is found within ${MAX_DELAY_RUNS} runs after the drift starts and stays found`, () => {
    const perPrefix = findingsByRobot.get(robot.robot)!;
    const firstK = perPrefix.findIndex((fs) => fs.some((f) => f.metric === metric));
    expect(firstK, `no ${metric} finding for ${robot.robot}`).toBeGreaterThanOrEqual(0);
    // firstK is the index of the latest run when first found; the drift starts at run index startShift.
    expect(firstK - robot.startShift).toBeLessThanOrEqual(MAX_DELAY_RUNS);
    expect(firstK).toBeGreaterThanOrEqual(robot.startShift); // never before the drift exists
    // Once found it stays open (held with relaxed limits): on at least 90 % of the later runs, and on each of the
    // last ten. Near the opening limit a noisy estimate can still drop it for a run (see docs/fleet.md).
    const later = perPrefix.slice(firstK).map((fs) => fs.some((f) => f.metric === metric));
    expect(later.filter(Boolean).length / later.length).toBeGreaterThanOrEqual(0.9);
    expect(later.slice(-10).every(Boolean)).toBe(true);
    const last = perPrefix[SHIFTS - 1]!.find((f) => f.metric === metric);
    expect(last).toBeDefined();
    // The reported change compares the median of the last five shifts (25..29, middle 27) with the level before the
    // onset (no drift): the injected drift at shift 27 is rate × (27 − start + 1). Tolerance 35 %: per-run estimate
    // noise (σ ≈ 1° for the rotation at 90 s of ground motion) and the turn-on bias added to the gyro bias norm.
    const injected = robot.ratePerShift * (27 - robot.startShift + 1);
    const scale = metric === 'time_offset_ms' ? 1000 : 1;
    expect(Math.abs(last!.change - injected * scale)).toBeLessThan(0.35 * injected * scale);
    expect(last!.message).toMatch(/ since 2026-10-\d\d: /);
  });
  it('raises nothing about the calibration quantities that do not drift', () => {
    const others = findingsByRobot.get(robot.robot)!.flat().filter((f) => f.metric !== metric);
    expect(others.map((f) => f.message)).toEqual([]);
  });
});

describe('stable robots', () => {
  it.each(DRIFTING_FLEET.filter((r) => r.drift === 'none').map((r) => r.robot))('%s gets no maintenance finding after any shift', (robot) => {
    expect(findingsByRobot.get(robot)!.flat().map((f) => f.message)).toEqual([]);
  });
});
