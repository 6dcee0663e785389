/**
 * A fleet whose calibration drifts slowly over many short shifts, to test drift detection across runs:
 * - kestrel-01: the camera–IMU mount creeps (extrinsic rotation error grows linearly from a given shift);
 * - plover-01: the gyro bias grows linearly (a warming or ageing IMU) from a given shift;
 * - heron-01: after a firmware change the odometry clock drifts, so the odometry−IMU offset grows shift by shift;
 * - wren-01, tern-01: stable.
 * The IMUs are factory-calibrated (small turn-on bias) so a trend is not hidden by power-up spread.
 */
import { simulateRun, type SimulatedRun } from './simulate.ts';
import { DEFAULT_IMU, makeRunSpec, type FaultSpec, type RunSpec, type SiteId } from './spec.ts';

export type DriftKind = 'extrinsic-creep' | 'gyro-bias-growth' | 'clock-drift' | 'none';

export interface DriftingRobot {
  robot: string;
  site: SiteId;
  drift: DriftKind;
  /** First shift (0-based) with drift. */
  startShift: number;
  /** Growth per shift after the start: degrees (extrinsic), rad/s (gyro bias), seconds (clock offset). */
  ratePerShift: number;
}

export interface DriftShift {
  robot: DriftingRobot;
  shift: number;
  spec: RunSpec;
  /** Injected drift at this shift, in the robot's drift unit (0 before the start). */
  injected: number;
}

export const DRIFTING_FLEET: readonly DriftingRobot[] = [
  { robot: 'kestrel-01', site: 'harbourside-depot', drift: 'extrinsic-creep', startShift: 8, ratePerShift: 0.2 },
  { robot: 'plover-01', site: 'northgate-yard', drift: 'gyro-bias-growth', startShift: 10, ratePerShift: 0.0008 },
  { robot: 'heron-01', site: 'northgate-yard', drift: 'clock-drift', startShift: 15, ratePerShift: 0.0015 },
  { robot: 'wren-01', site: 'harbourside-depot', drift: 'none', startShift: 0, ratePerShift: 0 },
  { robot: 'tern-01', site: 'harbourside-depot', drift: 'none', startShift: 0, ratePerShift: 0 },
];

/** Fixed axes so the drift accumulates in one direction (a mount bending, one gyro axis warming). */
const MOUNT_AXIS = [0.3, 0.8, -0.5] as const;
const BIAS_AXIS = [0.6, -0.64, 0.48] as const; // unit length

function faultsOf(r: DriftingRobot, injected: number): FaultSpec[] {
  if (injected === 0) return [];
  if (r.drift === 'extrinsic-creep') return [{ kind: 'extrinsic-rotation', magnitude: injected, axis: MOUNT_AXIS }];
  if (r.drift === 'clock-drift') return [{ kind: 'time-offset', magnitude: injected }];
  return [];
}

/** Specs of every shift of every robot, robot by robot, shifts in time order (one shift a day at 06:00 UTC). */
export function driftingFleetShifts(opts: { shifts?: number; durationS?: number; robots?: readonly DriftingRobot[] } = {}): DriftShift[] {
  const shifts = opts.shifts ?? 30;
  const out: DriftShift[] = [];
  (opts.robots ?? DRIFTING_FLEET).forEach((r, ri) => {
    for (let k = 0; k < shifts; k++) {
      const injected = k >= r.startShift ? r.ratePerShift * (k - r.startShift + 1) : 0;
      const day = new Date(Date.UTC(2026, 9, 1 + k, 6, 0, 0));
      out.push({
        robot: r,
        shift: k,
        injected,
        spec: makeRunSpec({
          seed: 50_000 + ri * 1000 + k,
          robotId: r.robot,
          runId: `shift-${String(k + 1).padStart(2, '0')}`,
          site: r.site,
          startedAt: day.toISOString().replace('.000Z', 'Z'),
          durationS: opts.durationS ?? 60,
          imuRateHz: 100,
          odometryRateHz: 10,
          gnssRateHz: 0,
          loops: true,
          imu: { ...DEFAULT_IMU, gyroTurnOnBias: 0.0005, accelTurnOnBias: 0.02 },
          faults: faultsOf(r, injected),
        }),
      });
    }
  });
  return out;
}

/**
 * Simulates one shift. A growing gyro bias is added to the gyro columns after simulation (a constant per shift
 * along a fixed axis); the other drifts are faults of the run spec.
 */
export function simulateDriftShift(s: DriftShift): SimulatedRun {
  const run = simulateRun(s.spec);
  if (s.robot.drift === 'gyro-bias-growth' && s.injected !== 0) {
    const { imu } = run;
    const bx = BIAS_AXIS[0] * s.injected, by = BIAS_AXIS[1] * s.injected, bz = BIAS_AXIS[2] * s.injected;
    for (let i = 0; i < imu.n; i++) {
      imu.gx[i] = imu.gx[i]! + bx;
      imu.gy[i] = imu.gy[i]! + by;
      imu.gz[i] = imu.gz[i]! + bz;
    }
  }
  return run;
}
