import { describe, expect, it } from 'vitest';
import { RunManifest } from './manifest.ts';

const valid = {
  format: 'plumbline-run/1',
  robot_id: 'kestrel-03',
  run_id: '2026-11-30T06-00Z',
  site: 'harbourside-depot',
  started_at: '2026-11-30T06:00:00Z',
  software: { odometry: '4.2.1' },
  odometry: { file: 'odometry.csv', source: 'visual-inertial', monocular: false, world_gravity_aligned: true },
  imu: { file: 'imu.csv', rate_hz: 200 },
  extrinsics: { imu_T_odom: { translation: [0.1, 0, 0.05], rotation_wxyz: [1, 0, 0, 0] } },
};

describe('RunManifest', () => {
  it('accepts a minimal valid manifest', () => {
    expect(RunManifest.safeParse(valid).success).toBe(true);
  });
  it('rejects another format version', () => {
    const r = RunManifest.safeParse({ ...valid, format: 'plumbline-run/2' });
    expect(r.success).toBe(false);
  });
  it('rejects a path that leaves the bundle', () => {
    const r = RunManifest.safeParse({ ...valid, imu: { file: '../etc/passwd', rate_hz: 200 } });
    expect(r.success).toBe(false);
  });
  it('rejects a non-unit extrinsic quaternion', () => {
    const r = RunManifest.safeParse({ ...valid, extrinsics: { imu_T_odom: { translation: [0, 0, 0], rotation_wxyz: [2, 0, 0, 0] } } });
    expect(r.success).toBe(false);
  });
});
