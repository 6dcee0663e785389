import { describe, expect, it } from 'vitest';
import { RunManifest } from '@plumbline/contracts';
import { quat } from '@plumbline/geometry';
import { makeRunSpec, simulateRun } from '@plumbline/simulator';
import { findStationary } from '../estimators/integrity.ts';
import { gravityCorrection, levelUpInOdomWorld } from './gravity-level.ts';

describe('static levelling of the odometry world', () => {
  it('finds the gravity direction of a world tilted by 3° within 0.45° (simulator truth)', () => {
    const sim = simulateRun(makeRunSpec({ seed: 9, durationS: 60, site: 'northgate-yard', faults: [{ kind: 'gravity-tilt', magnitude: 3, axis: [1, 0, 0] }] }));
    const manifest = RunManifest.parse(sim.manifest);
    const rest = findStationary(sim.imu, sim.odometry, 0.00025, 0.002);
    const up = levelUpInOdomWorld(sim.imu, sim.odometry, rest, manifest)!;
    const g = sim.truth.gravity_in_odom_world;
    const cos = -(up[0]! * g[0]! + up[1]! * g[1]! + up[2]! * g[2]!) / Math.hypot(g[0]!, g[1]!, g[2]!);
    // 0.45°: the simulated accelerometer turn-on bias is up to 0.05 m/s² per axis; its two horizontal components tilt
    // a levelled vector by up to √2·0.05/9.81 rad = 0.41° (levelling cannot separate bias from tilt).
    expect((Math.acos(Math.min(1, cos)) * 180) / Math.PI).toBeLessThan(0.45);
    // The correction by the true tilt brings up onto +z.
    const q = gravityCorrection(up, 3)!;
    const v = quat.rotateVec3(new Float64Array(3), q, up);
    expect(v[2]!).toBeGreaterThan(Math.cos((0.45 * Math.PI) / 180));
  });
});
