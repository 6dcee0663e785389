import type { FlagKind, Severity } from '@plumbline/contracts';

/**
 * Plain-language text of each flag kind: what the finding means for the map, and what to check on the robot.
 * `{v}` is replaced by the measured value with its unit.
 */
export const FLAG_WORDING: Record<FlagKind, { message: string; check: string }> = {
  'imu-gap': {
    message: 'The IMU stream stops for {v}; motion in that stretch is not checked against inertial data.',
    check: 'Check the IMU driver and its USB/serial link for dropped packets and the logging disk for stalls.',
  },
  'imu-saturation': {
    message: '{v} clipped at the sensor range; the inertial motion there is understated and odometry checks are unreliable.',
    check: 'Look for impacts or vibration at that time; consider a larger accelerometer or gyro range.',
  },
  'odometry-gap': {
    message: 'Odometry is silent for {v}; the map has no poses there and may be torn across the gap.',
    check: 'Check the odometry process for restarts or tracking loss (lighting, blur, featureless walls).',
  },
  'pose-jump': {
    message: 'The trajectory jumps {v} between consecutive poses, more than the motion allows; map parts after it are shifted.',
    check: 'Look for relocalisation or tracking resets in the odometry log at that time.',
  },
  units: {
    message: 'A stream appears to be in the wrong unit (ratio off by {v}); every inertial check of this run is unreliable.',
    check: 'Check the IMU driver configuration: gyro in rad/s (not deg/s), accelerometer in m/s² (not g).',
  },
  'time-offset': {
    message: 'Odometry and IMU clocks disagree by {v}; fused estimates and motion-dependent map geometry are skewed.',
    check: 'Check clock synchronisation between camera/lidar and IMU (hardware trigger, PTP/NTP) and driver latency settings.',
  },
  'rotation-mismatch': {
    message: 'Odometry rotation disagrees with the gyro by {v}; headings in this stretch of the map are wrong.',
    check: 'Look for tracking problems at that time (blur, reflections, dynamic objects) and a loose sensor mount.',
  },
  'extrinsic-rotation': {
    message: 'The IMU-to-odometry rotation differs from the calibration by {v}; fused motion is tilted.',
    check: 'Re-run the camera/lidar–IMU calibration and check the sensor mount for knocks or loosening.',
  },
  'gravity-tilt': {
    message: 'The odometry world frame is tilted {v} from gravity; floors and ramps in the map are sloped wrongly.',
    check: 'Check the gravity initialisation of the odometry (start at rest on level ground) and the IMU calibration.',
  },
  'scale-drift': {
    message: 'Odometry scale differs by {v} from the run average; distances in this stretch of the map are stretched or shrunk.',
    check: 'Check for low-texture or distant scenes and, for monocular odometry, for lack of acceleration.',
  },
  'loop-mismatch': {
    message: 'A loop closure contradicts the odometry ({v}) and was excluded; merged as is, it would fold the map.',
    check: 'Look at the two places joined by the loop: repeated structures (aisles, racks) can fool place recognition.',
  },
  'loop-drift': {
    message: 'Returning to a known place shows {v} of accumulated drift; map parts between the loop ends are displaced.',
    check: 'Check odometry quality along that stretch; consider more frequent loop closures on this route.',
  },
  'gnss-divergence': {
    message: 'Odometry and good GNSS fixes disagree by {v}; either the map or the GNSS track is wrong here.',
    check: 'Look for multipath near buildings or metal racks, and for odometry slips at that time.',
  },
  unobservable: {
    message: 'A quantity could not be checked here ({v}): the motion does not excite it. Not a fault.',
    check: 'Nothing to fix; add turns and accelerations to the route if this quantity matters.',
  },
};

/** Value with unit for the message text: 4 significant digits. */
export function formatValue(value: number | null, unit: string): string {
  if (value === null) return 'no value';
  const v = Number(value.toPrecision(4));
  return unit === '%' ? `${v} %` : `${v} ${unit}`;
}

/** Loop χ² against its gate, e.g. "χ² 476 against a 95 % gate of 12.59 for 6 dof"; the ratio when params are missing. */
function loopValue(value: number | null, unit: string, p: Record<string, number> | undefined): string {
  if (!p || p.chi2 === undefined || p.gate === undefined || p.dof === undefined) return `${formatValue(value, unit)} (χ² over its gate)`;
  const conf = p.confidencePct !== undefined ? `${Number(p.confidencePct.toPrecision(3))} % ` : '';
  return `χ² ${Number(p.chi2.toPrecision(4))} against a ${conf}gate of ${Number(p.gate.toPrecision(4))} for ${p.dof} dof`;
}

export interface WordingContext {
  severity: Severity;
  /** Threshold shown with the flag (the warn level for info flags). */
  threshold: number | null;
  params?: Record<string, number>;
}

/**
 * Message and check of a flag. Warn and critical flags use the kind's text; an info flag of a kind with thresholds
 * is a value within tolerance but at least INFO_FRACTION of the way to the warning level, and says so plainly.
 */
export function wordFlag(kind: FlagKind, value: number | null, unit: string, ctx?: WordingContext): { message: string; check: string } {
  const w = FLAG_WORDING[kind];
  const v = kind === 'loop-mismatch' ? loopValue(value, unit, ctx?.params) : formatValue(value, unit);
  if (ctx && ctx.severity === 'info' && ctx.threshold !== null && kind !== 'unobservable') {
    return {
      message: `${KIND_LABEL[kind]} ${v}: within tolerance, approaching the limit (warning from ${formatValue(ctx.threshold, unit)}).`,
      check: 'Nothing to fix now; watch this value on later runs of the robot.',
    };
  }
  return { message: w.message.replace('{v}', v), check: w.check };
}

/** Short name of the measured quantity of each kind, for info messages. */
const KIND_LABEL: Record<FlagKind, string> = {
  'imu-gap': 'IMU gap',
  'imu-saturation': 'Clipped IMU samples',
  'odometry-gap': 'Odometry gap',
  'pose-jump': 'Unexplained position step',
  units: 'Unit ratio deviation',
  'time-offset': 'Odometry − IMU time offset',
  'rotation-mismatch': 'Gyro vs odometry rotation residual',
  'extrinsic-rotation': 'IMU-to-odometry rotation vs calibration',
  'gravity-tilt': 'Odometry world tilt from gravity',
  'scale-drift': 'Scale deviation',
  'loop-mismatch': 'Loop closure',
  'loop-drift': 'Loop closure error',
  'gnss-divergence': 'Odometry vs GNSS step',
  unobservable: 'Unobservable stretch',
};
