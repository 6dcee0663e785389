import { describe, expect, it } from 'vitest';
import type { LoopColumns, OdometryColumns } from '@plumbline/bundle';
import { DEFAULT_POLICY, RunManifest } from '@plumbline/contracts';
import { stats } from '@plumbline/geometry';
import { analyzeLoops } from './loop-analysis.ts';
import { cumulativeDistance } from './path.ts';
import { repairTrajectory, trajectoryCsv } from './repair.ts';

const manifest = RunManifest.parse({
  format: 'plumbline-run/1', robot_id: 'plover-01', run_id: 'loop-test', site: 'northgate-yard', started_at: '2026-03-02T08:00:00Z',
  odometry: { file: 'odometry.csv', source: 'lidar', monocular: false, world_gravity_aligned: true },
  imu: { file: 'imu.csv', rate_hz: 200 },
  extrinsics: { imu_T_odom: { translation: [0, 0, 0], rotation_wxyz: [1, 0, 0, 0] } },
  loops: { file: 'loops.csv' },
  dock: { returns_to_start: true },
});

/** Truth: 10 s at the dock, one lap of a 150 m × 100 m rectangle (500 m) at 1.5 m/s, 10 s docked (turned back to 0°). */
function truthAt(s: number): { x: number; y: number; yaw: number } {
  const v = 1.5, L = 500;
  const d = Math.min(L, Math.max(0, (s - 10) * v));
  if (d >= L) return { x: 0, y: 0, yaw: 0 }; // docked facing the way it left
  if (d < 150) return { x: d, y: 0, yaw: 0 };
  if (d < 250) return { x: 150, y: d - 150, yaw: Math.PI / 2 };
  if (d < 400) return { x: 150 - (d - 250), y: 100, yaw: Math.PI };
  return { x: 0, y: 100 - (d - 400), yaw: -Math.PI / 2 };
}

/** Odometry drifting 1 % of the distance travelled along +x of the world (closure error 5 m over 500 m). */
function run(driftFrac: number): { odo: OdometryColumns; truth: OdometryColumns } {
  const hz = 10, dur = 10 + 500 / 1.5 + 10, n = Math.floor(dur * hz) + 1;
  const mk = (): OdometryColumns => ({ n, t: new Float64Array(n), x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), qw: new Float64Array(n), qx: new Float64Array(n), qy: new Float64Array(n), qz: new Float64Array(n), quality: null });
  const odo = mk(), truth = mk();
  let dist = 0, px = 0, py = 0;
  for (let i = 0; i < n; i++) {
    const s = i / hz, p = truthAt(s);
    if (i > 0) dist += Math.hypot(p.x - px, p.y - py);
    [px, py] = [p.x, p.y];
    for (const [c, dx] of [[truth, 0], [odo, driftFrac * dist]] as const) {
      c.t[i] = 1_772_438_400 + s;
      c.x[i] = p.x + dx;
      c.y[i] = p.y;
      c.qw[i] = Math.cos(p.yaw / 2);
      c.qz[i] = Math.sin(p.yaw / 2);
    }
  }
  return { odo, truth };
}

function falseLoop(odo: OdometryColumns): LoopColumns {
  // Claims the pose at 60 s (x≈75 m) is the same place as at 100 s (x≈135 m): a perceptual alias 60 m apart.
  const c = (v: number) => Float64Array.of(v);
  return { n: 1, tA: c(odo.t[600]!), tB: c(odo.t[1000]!), x: c(0.2), y: c(0), z: c(0), qw: c(1), qx: c(0), qy: c(0), qz: c(0), sigmaT: c(0.05), sigmaR: c(0.01) };
}

describe('loop analysis: dock return over a 500 m loop with 1 % drift', () => {
  it('measures the drift as 1 % ± 0.2 % and keeps the dock loop', () => {
    const { odo } = run(0.01);
    const dist = cumulativeDistance(odo);
    const r = analyzeLoops({ manifest, odometry: odo, dist, loops: null, gnss: null, thresholds: DEFAULT_POLICY.thresholds });
    expect(r.mode).toBe("planar");
    expect(r.loops).toHaveLength(1);
    const dock = r.loops[0]!;
    expect(dock.source).toBe('dock');
    expect(dock.accepted).toBe(true);
    // Path in odometry units is 500 m plus the drift component: 1 % of the path (common-practice drift metric).
    expect(Math.abs(dock.translationErrorPct - 1)).toBeLessThan(0.2);
    expect(Math.abs(r.driftPct!.value - 1)).toBeLessThan(0.2);
    expect(r.findings).toEqual([]); // 1 % is below the 2 % warning
  });

  it('flags a false loop as loop-mismatch (χ² above the 3-dof gate 7.815, NIST/SEMATECH) and excludes it', () => {
    const { odo } = run(0.01);
    const dist = cumulativeDistance(odo);
    const r = analyzeLoops({ manifest, odometry: odo, dist, loops: falseLoop(odo), gnss: null, thresholds: DEFAULT_POLICY.thresholds });
    const robot = r.loops.find((l) => l.source === 'robot')!;
    expect(robot.accepted).toBe(false);
    expect(robot.chi2Threshold).toBeCloseTo(7.815, 3);
    // The SE(3) gate for 6 dof is the 12.592 of the same table (NIST/SEMATECH e-Handbook §1.3.6.7.4).
    expect(stats.chiSquareQuantile(0.95, 6)).toBeCloseTo(12.592, 3);
    expect(robot.chi2!).toBeGreaterThan(7.815);
    expect(r.loops.find((l) => l.source === 'dock')!.accepted).toBe(true);
    expect(r.findings.map((f) => f.kind)).toEqual(['loop-mismatch']);
  });

  it('repairs the trajectory: the end returns to the dock and the worst error against truth shrinks', () => {
    const { odo, truth } = run(0.01);
    const dist = cumulativeDistance(odo);
    const r = analyzeLoops({ manifest, odometry: odo, dist, loops: null, gnss: null, thresholds: DEFAULT_POLICY.thresholds });
    const rep = repairTrajectory({ odometry: odo, keyframes: r.keyframes, optimised: r.optimised, scale: null, gravityRotation: null });
    const c = rep.columns, n = c.n;
    const worst = (a: OdometryColumns) => {
      let w = 0;
      for (let i = 0; i < n; i++) w = Math.max(w, Math.hypot(a.x[i]! - truth.x[i]!, a.y[i]! - truth.y[i]!));
      return w;
    };
    expect(worst(odo)).toBeGreaterThan(4.9);
    // The dock loop pins the end; the correction is spread along the path, leaving a fraction of the 5 m.
    expect(Math.hypot(c.x[n - 1]! - c.x[0]!, c.y[n - 1]! - c.y[0]!)).toBeLessThan(0.3);
    expect(worst(c)).toBeLessThan(2.6);
    const csv = trajectoryCsv(c);
    expect(csv.split('\n')[0]).toBe('t,x,y,z,qw,qx,qy,qz');
    expect(csv.split('\n')).toHaveLength(n + 2);
  });
});

describe('repairTrajectory similarity part', () => {
  it('rotates the world by the gravity correction and then scales to metres', () => {
    const c = (...v: number[]) => Float64Array.from(v);
    const odo: OdometryColumns = { n: 2, t: c(0, 1), x: c(1, 2), y: c(0, 0), z: c(0, 1), qw: c(1, 1), qx: c(0, 0), qy: c(0, 0), qz: c(0, 0), quality: null };
    // 90° about x: (x, y, z) → (x, −z, y); quaternion (cos 45°, sin 45°, 0, 0).
    const h = Math.SQRT1_2;
    const rep = repairTrajectory({ odometry: odo, keyframes: Int32Array.of(0, 1), optimised: null, scale: 2, gravityRotation: c(h, h, 0, 0) });
    const k = rep.columns;
    expect([k.x[1], k.y[1], k.z[1]].map((v) => Math.round(v! * 1e9) / 1e9 + 0)).toEqual([4, -2, 0]);
    expect([k.qw[1], k.qx[1]].map((v) => Math.round(v! * 1e9) / 1e9)).toEqual([0.707106781, 0.707106781]);
    expect(rep.gravityRotationDeg).toBeCloseTo(90, 9);
    expect(rep.maxShift).toBe(0);
  });
});
