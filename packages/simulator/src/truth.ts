/**
 * truth.json: the true parameters of a simulated run and every injected fault, written BESIDE the bundle. Uses the
 * report's conventions: time_offset_s = odometry stamp − IMU stamp of the same instant; scale turns odometry
 * distances into metres; gravity_tilt_deg is the angle between true gravity in the odometry world and its −z axis;
 * extrinsic_rotation_error_deg is the angle between declared and true imu_T_odom rotation; skew ppm = d(offset)/dt·1e6.
 */
import { MANIFEST_FORMAT } from '@plumbline/contracts';
import type { RunManifestInput } from '@plumbline/contracts';
import { quat, vec3 } from '@plumbline/geometry';
import type { Scenario } from './scenario.ts';
import { gravityInOdomWorld } from './scenario.ts';
import { SITES } from './spec.ts';
import type { FaultKind } from './spec.ts';
import { divergenceDirection, type MultipathEvent } from './sensors/gnss.ts';
import type { FalseLoop } from './sensors/loops.ts';
import { jumpDirection, odometryClockOffset } from './sensors/odometry.ts';

const RAD = 180 / Math.PI;
/** Fictional constant geoid separation used in NMEA GGA (MSL altitude = ellipsoidal − separation). */
export const GEOID_SEPARATION_M = 47.3;

export interface TruthFault {
  kind: FaultKind;
  /** epoch seconds on the IMU clock */
  t_start: number;
  t_end: number;
  magnitude: number;
  unit: string;
  params: Record<string, unknown>;
}

export interface RunTruth {
  format: 'plumbline-truth/1';
  robot_id: string;
  run_id: string;
  site: string;
  seed: number;
  motion: string;
  t_start: number;
  t_end: number;
  duration_s: number;
  site_origin: { lat_deg: number; lon_deg: number; h_m: number };
  gravity_m_s2: number;
  path_length_m: number;
  dock_returns_to_start: boolean;
  scale: number;
  time_offset_s: number;
  extrinsic_true: { translation: number[]; rotation_wxyz: number[] };
  extrinsic_manifest: { translation: number[]; rotation_wxyz: number[] };
  extrinsic_rotation_error_deg: number;
  odom_world_in_enu: { translation: number[]; rotation_wxyz: number[] };
  world_gravity_aligned_claim: boolean;
  gravity_in_odom_world: number[];
  gravity_tilt_deg: number;
  imu: Record<string, unknown>;
  odometry: Record<string, unknown>;
  gnss: Record<string, unknown> | null;
  loops: Record<string, unknown> | null;
  faults: TruthFault[];
}

const r9 = (x: number) => Math.round(x * 1e9) / 1e9;
const arr = (a: ArrayLike<number>) => Array.from(a, r9);

export interface TruthExtras {
  multipath: MultipathEvent[];
  falseLoops: FalseLoop[];
  loopCount: number;
  imuSamplesRemoved: number[];
}

/** The manifest (run.json) of a scenario, with the file names chosen by the writer. */
export function buildManifest(s: Scenario, files: { odometry: string; imu: string; gnss?: string; loops?: string }): RunManifestInput {
  const spec = s.spec;
  const m: RunManifestInput = {
    format: MANIFEST_FORMAT,
    robot_id: spec.robotId,
    run_id: spec.runId,
    site: spec.site,
    started_at: spec.startedAt,
    software: { odometry: '3.4.1', firmware: 'bird-2026.02' },
    odometry: { file: files.odometry, source: spec.odometrySource, monocular: spec.monocular, world_gravity_aligned: s.worldGravityAlignedClaim },
    imu: {
      file: files.imu,
      rate_hz: spec.imuRateHz,
      gyro_range_rad_s: r9(spec.imu.gyroRange),
      accel_range_m_s2: r9(spec.imu.accelRange),
      gyro_noise_density: spec.imu.gyroNoiseDensity,
      accel_noise_density: spec.imu.accelNoiseDensity,
    },
    extrinsics: { imu_T_odom: { translation: arr(s.imuTOdomManifest.t) as [number, number, number], rotation_wxyz: arr(s.imuTOdomManifest.q) as [number, number, number, number] } },
  };
  if (files.gnss) m.gnss = { file: files.gnss, antenna_in_imu: arr(s.antennaInImu) as [number, number, number] };
  if (files.loops) m.loops = { file: files.loops };
  if (spec.motion === 'ground') m.dock = { returns_to_start: true };
  return m;
}

/** One truth entry per injected fault, in spec order, with epoch times on the IMU clock. */
function truthFaults(s: Scenario, x: TruthExtras): TruthFault[] {
  const spec = s.spec;
  const t0 = s.t0Epoch;
  const tEnd = t0 + spec.durationS;
  const g = gravityInOdomWorld(s);
  const faults: TruthFault[] = [];
  let gapIndex = 0;
  let falseIndex = 0;
  for (const f of spec.faults) {
    const a = t0 + (f.startS ?? 0);
    const b = t0 + (f.endS ?? spec.durationS);
    const base = { kind: f.kind, t_start: r9(a), t_end: r9(b) };
    switch (f.kind) {
      case 'time-offset':
        if (f.variant === 'skew') faults.push({ ...base, t_end: r9(tEnd), magnitude: f.magnitude, unit: 'ppm', params: { offset_at_end_s: r9(odometryClockOffset(s, spec.durationS)) } });
        else faults.push({ ...base, t_start: r9(t0), t_end: r9(tEnd), magnitude: f.magnitude, unit: 's', params: { offset_s: f.magnitude } });
        break;
      case 'extrinsic-rotation':
        faults.push({ ...base, t_start: r9(t0), t_end: r9(tEnd), magnitude: f.magnitude, unit: 'deg', params: { axis_in_odom_body: f.axis ?? [0.3, 0.8, -0.5] } });
        break;
      case 'gravity-tilt':
        faults.push({ ...base, t_start: r9(t0), t_end: r9(tEnd), magnitude: f.magnitude, unit: 'deg', params: { gravity_in_odom_world: arr(g) } });
        break;
      case 'scale-drift':
        if (f.variant === 'step') faults.push({ ...base, t_end: r9(a), magnitude: f.magnitude, unit: '%', params: { scale_after_over_before: 1 + f.magnitude / 100 } });
        else faults.push({ ...base, t_end: r9(tEnd), magnitude: f.magnitude, unit: '%/100m', params: { rule: 'scale(d) = scale_at_start × (1 + magnitude/100 × d/100 m), d = true distance since t_start' } });
        break;
      case 'imu-gap':
      case 'odometry-gap':
        faults.push({ ...base, magnitude: r9(b - a), unit: 's', params: f.kind === 'imu-gap' ? { samples_removed: x.imuSamplesRemoved[gapIndex++] ?? 0 } : {} });
        break;
      case 'imu-saturation': {
        const gyro = f.variant === 'gyro';
        const range = gyro ? spec.imu.gyroRange : spec.imu.accelRange;
        const amp = f.magnitude > 0 ? f.magnitude : 1.6 * range;
        faults.push({ ...base, magnitude: r9(amp), unit: gyro ? 'rad/s' : 'm/s²', params: { sensor: gyro ? 'gyro-x' : 'accel-z', range: r9(range), freq_hz: 7 } });
        break;
      }
      case 'pose-jump':
        faults.push({ ...base, t_end: r9(a), magnitude: f.magnitude, unit: 'm', params: { direction_in_odom_world: arr(jumpDirection(f.axis)) } });
        break;
      case 'units': {
        const deg = f.variant === 'gyro-deg';
        faults.push({ ...base, t_start: r9(t0), t_end: r9(tEnd), magnitude: deg ? r9(RAD) : r9(1 / 9.80665), unit: 'factor', params: deg ? { sensor: 'gyro', written_as: 'deg/s' } : { sensor: 'accel', written_as: 'g (9.80665 m/s²)' } });
        break;
      }
      case 'loop-mismatch': {
        const fl = x.falseLoops[falseIndex++];
        if (fl) faults.push({ ...base, t_start: r9(t0 + fl.tARel), t_end: r9(t0 + fl.tBRel), magnitude: r9(fl.separationM), unit: 'm', params: { requested_min_separation_m: f.magnitude, loop_stamps_odometry_clock: [r9(t0 + fl.tARel + odometryClockOffset(s, fl.tARel)), r9(t0 + fl.tBRel + odometryClockOffset(s, fl.tBRel))] } });
        break;
      }
      case 'gnss-divergence':
        faults.push({ ...base, magnitude: f.magnitude, unit: 'm', params: { direction_enu: arr([...divergenceDirection(f.axis), 0]) } });
        break;
    }
  }
  return faults;
}

/** The truth.json document of a scenario. */
export function buildTruth(s: Scenario, x: TruthExtras): RunTruth {
  const spec = s.spec;
  const site = SITES[spec.site];
  const t0 = s.t0Epoch;
  const tEnd = t0 + spec.durationS;
  const g = gravityInOdomWorld(s);
  const faults = truthFaults(s, x);
  const constOffset = spec.faults.filter((f) => f.kind === 'time-offset' && f.variant !== 'skew').reduce((acc, f) => acc + f.magnitude, 0);
  return {
    format: 'plumbline-truth/1',
    robot_id: spec.robotId,
    run_id: spec.runId,
    site: spec.site,
    seed: spec.seed,
    motion: spec.motion,
    t_start: t0,
    t_end: tEnd,
    duration_s: spec.durationS,
    site_origin: { lat_deg: site.latDeg, lon_deg: site.lonDeg, h_m: site.hM },
    gravity_m_s2: r9(s.gravity),
    path_length_m: r9(s.motion.pathLengthM),
    dock_returns_to_start: spec.motion === 'ground',
    scale: spec.scale,
    time_offset_s: constOffset,
    extrinsic_true: { translation: arr(s.imuTOdomTrue.t), rotation_wxyz: arr(s.imuTOdomTrue.q) },
    extrinsic_manifest: { translation: arr(s.imuTOdomManifest.t), rotation_wxyz: arr(s.imuTOdomManifest.q) },
    extrinsic_rotation_error_deg: r9(quat.angle(quat.multiply(quat.create(), quat.conjugate(quat.create(), s.imuTOdomTrue.q), s.imuTOdomManifest.q)) * RAD),
    odom_world_in_enu: { translation: arr(s.enuTOdomWorld.t), rotation_wxyz: arr(s.enuTOdomWorld.q) },
    world_gravity_aligned_claim: s.worldGravityAlignedClaim,
    gravity_in_odom_world: arr(g),
    gravity_tilt_deg: r9(vec3.angle(g, vec3.create(0, 0, -1)) * RAD),
    imu: {
      rate_hz: spec.imuRateHz,
      noise: spec.noise,
      gyro_turn_on_bias_rad_s: arr(s.gyroBias0),
      accel_turn_on_bias_m_s2: arr(s.accelBias0),
      gyro_noise_density: spec.imu.gyroNoiseDensity,
      accel_noise_density: spec.imu.accelNoiseDensity,
      gyro_bias_random_walk: spec.imu.gyroBiasRandomWalk,
      accel_bias_random_walk: spec.imu.accelBiasRandomWalk,
      gyro_range_rad_s: r9(spec.imu.gyroRange),
      accel_range_m_s2: r9(spec.imu.accelRange),
      quantisation_bits: spec.noise === 'realistic' ? spec.imu.bits : 0,
      // Earth rotation (7.29e-5 rad/s) sits far below consumer-MEMS gyro noise and bias; the local frame is inertial.
      earth_rotation_modelled: false,
    },
    odometry: { rate_hz: spec.odometryRateHz, source: spec.odometrySource, monocular: spec.monocular, stamps: 'odometry clock' },
    gnss:
      spec.gnssRateHz > 0 && s.motion.outdoorIntervals.length > 0
        ? {
            rate_hz: spec.gnssRateHz,
            format: spec.gnssFormat,
            antenna_in_imu: arr(s.antennaInImu),
            geoid_separation_m: spec.gnssFormat === 'nmea' ? GEOID_SEPARATION_M : null,
            stamps: 'IMU clock',
            multipath: x.multipath.map((m) => ({ t_start: r9(t0 + m.tStartS), t_end: r9(t0 + m.tEndS), offset_enu_m: arr(m.offsetEnu) })),
          }
        : null,
    loops: spec.loops ? { count: x.loopCount, false_count: x.falseLoops.length, translation_units: 'odometry (metres / scale)', stamps: 'odometry clock' } : null,
    faults,
  };
}
