/** Run specifications: what to simulate, with which sensors, noise and injected faults. */
import type { OdometrySource } from '@plumbline/contracts';

export const FAULT_KINDS = [
  'time-offset',
  'extrinsic-rotation',
  'gravity-tilt',
  'scale-drift',
  'imu-gap',
  'imu-saturation',
  'odometry-gap',
  'pose-jump',
  'units',
  'loop-mismatch',
  'gnss-divergence',
] as const;
export type FaultKind = (typeof FAULT_KINDS)[number];

/**
 * One injected fault. Times are seconds since the run start (converted to epoch seconds in truth.json).
 * - time-offset: magnitude s (constant odometry − IMU offset); variant 'skew': magnitude ppm from startS on.
 * - extrinsic-rotation, gravity-tilt: magnitude degrees about `axis` (gravity-tilt: horizontal axis).
 * - scale-drift: variant 'linear': magnitude % per 100 m from startS; variant 'step': magnitude % at startS.
 * - imu-gap, odometry-gap: samples missing over [startS, endS); magnitude ignored (recorded as the gap length).
 * - imu-saturation: variant 'accel' | 'gyro'; an impact over [startS, endS) with peak magnitude (m/s² or rad/s;
 *   0 means 1.6 × range).
 * - pose-jump: magnitude metres at startS.
 * - units: variant 'gyro-deg' (deg/s labelled rad/s) | 'accel-g' (g labelled m/s²).
 * - loop-mismatch: a false loop candidate between two places magnitude metres apart or more, near startS.
 * - gnss-divergence: GNSS biased by magnitude metres horizontally over [startS, endS).
 */
export interface FaultSpec {
  kind: FaultKind;
  magnitude: number;
  startS?: number;
  endS?: number;
  variant?: string;
  /** rotation axis (normalised on use) */
  axis?: readonly [number, number, number];
}

export const SITES = {
  'harbourside-depot': { latDeg: 47.3821, lonDeg: 8.5412, hM: 412.0, indoorAisles: true },
  'northgate-yard': { latDeg: 47.4013, lonDeg: 8.5897, hM: 430.0, indoorAisles: false },
} as const;
export type SiteId = keyof typeof SITES;

export interface ImuNoiseSpec {
  /** rad/s/√Hz */
  gyroNoiseDensity: number;
  /** m/s²/√Hz */
  accelNoiseDensity: number;
  /** gyro bias random walk, rad/s²/√Hz */
  gyroBiasRandomWalk: number;
  /** accel bias random walk, m/s³/√Hz */
  accelBiasRandomWalk: number;
  /** bound of the constant turn-on bias per axis, rad/s */
  gyroTurnOnBias: number;
  /** bound of the constant turn-on bias per axis, m/s² */
  accelTurnOnBias: number;
  /** ±range, rad/s */
  gyroRange: number;
  /** ±range, m/s² */
  accelRange: number;
  /** ADC bits over the full range (0 = no quantisation) */
  bits: number;
}

export interface RunSpec {
  seed: number;
  robotId: string;
  runId: string;
  site: SiteId;
  /** ISO 8601 start time */
  startedAt: string;
  durationS: number;
  motion: 'ground' | 'handheld';
  imuRateHz: number;
  odometryRateHz: number;
  /** 0 = no GNSS */
  gnssRateHz: number;
  gnssFormat: 'csv' | 'nmea';
  loops: boolean;
  odometrySource: OdometrySource;
  monocular: boolean;
  /** true scale: odometry distance × scale = metres */
  scale: number;
  /** 'none' turns off every random error (noise, biases, quantisation, odometry drift, GNSS noise) */
  noise: 'realistic' | 'none';
  imu: ImuNoiseSpec;
  faults: FaultSpec[];
}

/** Consumer-MEMS defaults (common practice; see CHECK-VALUES.md "Facts of the trade"). */
export const DEFAULT_IMU: ImuNoiseSpec = {
  gyroNoiseDensity: 0.00025,
  accelNoiseDensity: 0.002,
  gyroBiasRandomWalk: 2e-5,
  accelBiasRandomWalk: 3e-4,
  gyroTurnOnBias: 0.005,
  accelTurnOnBias: 0.05,
  gyroRange: (500 * Math.PI) / 180,
  accelRange: 8 * 9.80665,
  bits: 16,
};

/** Fills defaults: a 2-minute clean ground run of kestrel-01 at harbourside-depot. */
export function makeRunSpec(partial: Partial<RunSpec> & { imu?: Partial<ImuNoiseSpec> } = {}): RunSpec {
  const { imu, ...rest } = partial;
  return {
    seed: 1,
    robotId: 'kestrel-01',
    runId: 'run-0001',
    site: 'harbourside-depot',
    startedAt: '2026-03-02T08:00:00Z',
    durationS: 120,
    motion: 'ground',
    imuRateHz: 200,
    odometryRateHz: 20,
    gnssRateHz: 5,
    gnssFormat: 'csv',
    loops: true,
    odometrySource: 'visual-inertial',
    monocular: false,
    scale: 1,
    noise: 'realistic',
    faults: [],
    ...rest,
    imu: { ...DEFAULT_IMU, ...imu },
  };
}

/** Checks a spec before simulation; throws RangeError naming the offending field (programmer or CLI input error). */
export function validateRunSpec(spec: RunSpec, customMotion = false): void {
  const fail = (msg: string): never => {
    throw new RangeError(`run spec: ${msg}`);
  };
  if (!(spec.site in SITES)) fail(`unknown site "${spec.site}"`);
  // The built-in motions need their rests at both ends; a custom motion model brings its own timeline.
  const minS = customMotion ? 0 : spec.motion === 'handheld' ? 20 : 12;
  if (!(spec.durationS >= minS && spec.durationS > 0)) fail(`durationS ${spec.durationS} must be at least ${minS} s for ${spec.motion} motion`);
  for (const [name, v] of [['imuRateHz', spec.imuRateHz], ['odometryRateHz', spec.odometryRateHz], ['scale', spec.scale]] as const) {
    if (!(v > 0) || !Number.isFinite(v)) fail(`${name} must be a positive number, got ${v}`);
  }
  if (!(spec.gnssRateHz >= 0)) fail(`gnssRateHz must be ≥ 0, got ${spec.gnssRateHz}`);
  spec.faults.forEach((f, i) => {
    const where = `faults[${i}] (${f.kind})`;
    if (!FAULT_KINDS.includes(f.kind)) fail(`${where}: unknown kind`);
    if (!Number.isFinite(f.magnitude)) fail(`${where}: magnitude must be finite`);
    for (const t of [f.startS, f.endS]) {
      if (t !== undefined && !(t >= 0 && t <= spec.durationS)) fail(`${where}: time ${t} s outside the run [0, ${spec.durationS}]`);
    }
    if (f.startS !== undefined && f.endS !== undefined && f.endS <= f.startS) fail(`${where}: endS ${f.endS} ≤ startS ${f.startS}`);
  });
}
