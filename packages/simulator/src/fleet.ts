/**
 * The demo fleet of Saltmarsh Logistics: 8 robots × 3 short runs at two sites, about a third clean, every fault kind
 * at least once, some runs with two faults. `npm run seed-runs` writes them to seed-runs/ byte-identically.
 */
import { makeRunSpec } from './spec.ts';
import type { FaultSpec, RunSpec, SiteId } from './spec.ts';

export interface FleetRun {
  spec: RunSpec;
  /** GNSS as NMEA 0183 instead of CSV */
  nmea: boolean;
}

interface Row {
  robot: string;
  run: string;
  site: SiteId;
  day: number;
  hour: number;
  durationS: number;
  source?: RunSpec['odometrySource'];
  motion?: RunSpec['motion'];
  monocular?: boolean;
  scale?: number;
  nmea?: boolean;
  faults?: FaultSpec[];
}

const ROWS: Row[] = [
  { robot: 'kestrel-01', run: 'r0301-0800', site: 'harbourside-depot', day: 2, hour: 8, durationS: 240 },
  { robot: 'kestrel-01', run: 'r0302-1000', site: 'harbourside-depot', day: 3, hour: 10, durationS: 200, faults: [{ kind: 'time-offset', magnitude: 0.035 }] },
  { robot: 'kestrel-01', run: 'r0303-1400', site: 'harbourside-depot', day: 4, hour: 14, durationS: 180, faults: [{ kind: 'imu-gap', magnitude: 0, startS: 50, endS: 52.5 }, { kind: 'odometry-gap', magnitude: 0, startS: 120, endS: 123 }] },
  { robot: 'kestrel-02', run: 'r0301-0900', site: 'harbourside-depot', day: 2, hour: 9, durationS: 150 },
  { robot: 'kestrel-02', run: 'r0302-1100', site: 'harbourside-depot', day: 3, hour: 11, durationS: 210, faults: [{ kind: 'extrinsic-rotation', magnitude: 4 }] },
  { robot: 'kestrel-02', run: 'r0304-0800', site: 'harbourside-depot', day: 5, hour: 8, durationS: 180, faults: [{ kind: 'pose-jump', magnitude: 0.6, startS: 95 }] },
  { robot: 'kestrel-03', run: 'r0301-1300', site: 'harbourside-depot', day: 2, hour: 13, durationS: 120, source: 'lidar' },
  { robot: 'kestrel-03', run: 'r0303-0900', site: 'harbourside-depot', day: 4, hour: 9, durationS: 150, source: 'lidar', faults: [{ kind: 'imu-saturation', variant: 'accel', magnitude: 0, startS: 70, endS: 70.4 }] },
  { robot: 'kestrel-03', run: 'r0305-1500', site: 'harbourside-depot', day: 6, hour: 15, durationS: 90, source: 'lidar', faults: [{ kind: 'units', variant: 'gyro-deg', magnitude: 0 }] },
  { robot: 'plover-01', run: 'r0301-0700', site: 'northgate-yard', day: 2, hour: 7, durationS: 180, nmea: true },
  { robot: 'plover-01', run: 'r0302-1300', site: 'northgate-yard', day: 3, hour: 13, durationS: 200, nmea: true, faults: [{ kind: 'gnss-divergence', magnitude: 4, startS: 60, endS: 100 }] },
  { robot: 'plover-01', run: 'r0304-1000', site: 'northgate-yard', day: 5, hour: 10, durationS: 150, faults: [{ kind: 'gravity-tilt', magnitude: 3 }] },
  { robot: 'plover-02', run: 'r0301-1000', site: 'northgate-yard', day: 2, hour: 10, durationS: 180, source: 'visual', monocular: true, scale: 2 },
  { robot: 'plover-02', run: 'r0303-1100', site: 'northgate-yard', day: 4, hour: 11, durationS: 240, source: 'visual', monocular: true, scale: 2, faults: [{ kind: 'scale-drift', variant: 'linear', magnitude: 5, startS: 20 }] },
  { robot: 'plover-02', run: 'r0305-0900', site: 'northgate-yard', day: 6, hour: 9, durationS: 200, source: 'visual', monocular: true, scale: 2, faults: [{ kind: 'scale-drift', variant: 'step', magnitude: 10, startS: 100 }] },
  { robot: 'heron-01', run: 'r0302-0800', site: 'northgate-yard', day: 3, hour: 8, durationS: 120 },
  { robot: 'heron-01', run: 'r0303-1500', site: 'northgate-yard', day: 4, hour: 15, durationS: 240, faults: [{ kind: 'loop-mismatch', magnitude: 8, startS: 40 }] },
  { robot: 'heron-01', run: 'r0305-1300', site: 'northgate-yard', day: 6, hour: 13, durationS: 200, nmea: true, faults: [{ kind: 'time-offset', variant: 'skew', magnitude: 300, startS: 30 }, { kind: 'gnss-divergence', magnitude: 3, startS: 100, endS: 140 }] },
  { robot: 'wren-01', run: 'r0302-0900', site: 'harbourside-depot', day: 3, hour: 9, durationS: 60, source: 'wheel' },
  { robot: 'wren-01', run: 'r0303-1600', site: 'harbourside-depot', day: 4, hour: 16, durationS: 90, source: 'wheel', faults: [{ kind: 'units', variant: 'accel-g', magnitude: 0 }] },
  { robot: 'wren-01', run: 'r0305-1000', site: 'harbourside-depot', day: 6, hour: 10, durationS: 120, source: 'wheel', faults: [{ kind: 'imu-saturation', variant: 'gyro', magnitude: 0, startS: 45, endS: 45.5 }, { kind: 'odometry-gap', magnitude: 0, startS: 80, endS: 82 }] },
  { robot: 'tern-01', run: 'r0302-1400', site: 'harbourside-depot', day: 3, hour: 14, durationS: 120, motion: 'handheld', source: 'visual', monocular: true, scale: 1.6 },
  { robot: 'tern-01', run: 'r0304-1500', site: 'harbourside-depot', day: 5, hour: 15, durationS: 120, motion: 'handheld', faults: [{ kind: 'time-offset', magnitude: 0.02 }, { kind: 'extrinsic-rotation', magnitude: 2 }] },
  { robot: 'tern-01', run: 'r0306-0900', site: 'harbourside-depot', day: 7, hour: 9, durationS: 90, motion: 'handheld' },
];

/** Specs of the demo fleet's seed runs (100 Hz IMU, 10 Hz odometry, 5 Hz GNSS outdoors). */
export function demoFleet(): FleetRun[] {
  return ROWS.map((r, i) => {
    const handheld = r.motion === 'handheld';
    return {
      nmea: r.nmea ?? false,
      spec: makeRunSpec({
        seed: 1000 + i,
        robotId: r.robot,
        runId: r.run,
        site: r.site,
        startedAt: `2026-03-${String(r.day).padStart(2, '0')}T${String(r.hour).padStart(2, '0')}:00:00Z`,
        durationS: r.durationS,
        motion: r.motion ?? 'ground',
        imuRateHz: 100,
        odometryRateHz: 10,
        gnssRateHz: handheld ? 0 : 5,
        gnssFormat: r.nmea ? 'nmea' : 'csv',
        loops: !handheld,
        odometrySource: r.source ?? 'visual-inertial',
        monocular: r.monocular ?? false,
        scale: r.scale ?? 1,
        faults: r.faults ?? [],
      }),
    };
  });
}
