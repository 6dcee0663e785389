/**
 * Acceptance of the inertial estimators on simulated runs with known truth (packages/simulator): consumer-MEMS IMU
 * noise (simulator defaults: gyro 0.00025 rad/s/√Hz, accel 0.002 m/s²/√Hz, turn-on biases, bias random walk,
 * 16-bit quantisation) and odometry that drifts like a real front end. Seeded; each case uses at least 10 runs; a
 * table of achieved errors is printed. Tolerances are the project's acceptance targets.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, RunManifest, severityOf, type FlagKind } from '@plumbline/contracts';
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { quat, vec3 } from '@plumbline/geometry';
import { createKinState, makeRunSpec, simulateRun, type FaultSpec, type SimulatedRun } from '@plumbline/simulator';
import { analyzeInertial, type InertialAnalysis } from '../packages/analysis/src/estimators/index.ts';

interface Case {
  run: SimulatedRun;
  a: InertialAnalysis;
}

function analyse(seed: number, motion: 'ground' | 'handheld', durationS: number, faults: FaultSpec[], timeOffsetWindowS?: number): Case {
  const run = simulateRun(makeRunSpec({ seed, motion, durationS, faults, loops: false, gnssRateHz: 0, robotId: 'plover-01', runId: `acc-${seed}` }));
  const a = analyzeInertial(
    { manifest: RunManifest.parse(run.manifest), imu: run.imu as ImuColumns, odometry: { ...run.odometry, quality: null } as OdometryColumns },
    { gravityMS2: run.truth.gravity_m_s2, ...(timeOffsetWindowS ? { timeOffsetWindowS } : {}) },
  );
  return { run, a };
}

/** Uniform draw in [lo, hi] from a seed (so the injected sizes are reproducible). */
function draw(seed: number, k: number, lo: number, hi: number): number {
  const x = Math.sin(seed * 12.9898 + k * 78.233) * 43758.5453;
  return lo + (hi - lo) * (x - Math.floor(x));
}

function table(title: string, rows: Record<string, number | string>[]): void {
  const fmt = (v: number | string) => (typeof v === 'number' ? v.toPrecision(4) : v);
  console.log(`\n${title}\n${rows.map((r) => Object.entries(r).map(([k, v]) => `${k}=${fmt(v)}`).join('  ')).join('\n')}`);
}

/**
 * Realised scale (metres per odometry unit) over [t0, t1] (IMU clock): true path length of the odometry body over
 * odometry path length, from the simulator's true motion. Steps shorter than 2 mm are skipped (noise-dominated).
 */
function realisedScale(run: SimulatedRun, t0: number, t1: number): number {
  const s = run.scenario, o = run.odometry, st = createKinState();
  const lever = vec3.create(), p = vec3.create(), prev = vec3.create();
  let trueLen = 0, odomLen = 0, have = false;
  for (let k = 0; k < o.n; k++) {
    const t = s.t0Epoch + o.tTrue[k]!;
    if (t < t0 || t > t1) {
      have = false;
      continue;
    }
    s.evaluate(o.tTrue[k]!, st);
    quat.rotateVec3(lever, st.q, s.imuTOdomTrue.t);
    vec3.add(p, st.p, lever);
    if (have && k > 0) {
      const dTrue = vec3.norm(vec3.sub(lever, p, prev));
      const dOdom = Math.hypot(o.x[k]! - o.x[k - 1]!, o.y[k]! - o.y[k - 1]!, o.z[k]! - o.z[k - 1]!);
      if (dTrue > 0.002) {
        trueLen += dTrue;
        odomLen += dOdom;
      }
    }
    vec3.copy(prev, p);
    have = true;
  }
  return odomLen > 0 ? trueLen / odomLen : Number.NaN;
}

const worstSeverity = (a: InertialAnalysis) => {
  let worst: { kind: FlagKind; value: number; sev: string } | null = null;
  for (const f of a.findings) {
    if (f.value === null) continue;
    const sev = severityOf(f.value, DEFAULT_POLICY.thresholds[f.kind]);
    if (sev !== 'info' && (worst === null || sev === 'critical')) worst = { kind: f.kind, value: f.value, sev };
  }
  return worst;
};

describe('20 clean ground runs (60 s)', () => {
  const cases: Case[] = [];
  beforeAll(() => {
    for (let seed = 101; seed < 121; seed++) cases.push(analyse(seed, 'ground', 60, []));
  });

  it('raise no finding above info under the default policy', () => {
    const rows = cases.map(({ a }, i) => ({ seed: 101 + i, findings: a.findings.length, worst: JSON.stringify(worstSeverity(a)) }));
    table('clean runs: worst finding under the default policy', rows);
    for (const { a } of cases) expect(worstSeverity(a)).toBeNull();
  });

  it('estimate scale within 1 % of the realised scale in every observable window', () => {
    let worst = 0, count = 0;
    for (const { run, a } of cases) {
      const s = a.series.scale;
      for (let w = 0; w < s.t.length; w++) {
        if (!Number.isFinite(s.value[w]!)) continue;
        const truth = realisedScale(run, s.t[w]! - 5, s.t[w]! + 5);
        const err = Math.abs(s.value[w]! / truth - 1);
        worst = Math.max(worst, err);
        count++;
      }
    }
    table('scale in observable windows', [{ windows: count, worstRelErrPct: worst * 100 }]);
    expect(count).toBeGreaterThan(40);
    expect(worst).toBeLessThan(0.01);
  });

  it('report constant-velocity stretches as unobservable, never as a fault', () => {
    let cruise = 0, unobservable = 0;
    for (const { run, a } of cases) {
      const s = a.series.scale;
      const st = createKinState();
      for (let w = 0; w < s.t.length; w++) {
        // True acceleration magnitude never above 0.05 m/s² inside the window: a constant-velocity (or resting) stretch.
        let maxAcc = 0;
        for (let t = s.t[w]! - 5; t <= s.t[w]! + 5; t += 0.05) {
          run.scenario.evaluate(t - run.scenario.t0Epoch, st);
          maxAcc = Math.max(maxAcc, Math.hypot(st.a[0]!, st.a[1]!));
        }
        if (maxAcc > 0.05) continue;
        cruise++;
        if (!Number.isFinite(s.value[w]!) && s.reasons[w]!.startsWith('unobservable')) unobservable++;
      }
      for (const f of a.findings) if (f.kind === 'scale-drift') expect(f.value === null || Math.abs(f.value) < 3).toBe(true);
    }
    table('constant-velocity windows', [{ windows: cruise, reportedUnobservable: unobservable }]);
    expect(cruise).toBeGreaterThan(10);
    expect(unobservable).toBe(cruise);
  });
});
