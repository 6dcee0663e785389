/**
 * Acceptance of the analysis against simulator truth: the demo fleet in seed-runs/ (24 seeded runs of 8 robots,
 * every injected fault with its interval in truth.json) and in-memory simulator runs for loop-drift accuracy.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeRunDetailed } from '@plumbline/analysis';
import { RunManifest, type Report } from '@plumbline/contracts';
import { pose, quat } from '@plumbline/geometry';
import { createKinState, FAULT_KINDS, makeRunSpec, simulateRun, type FaultSpec } from '@plumbline/simulator';
import { analyseFleet, intersectionOverUnion, raised, type AnalysedRun } from './analysis-fleet.ts';

/** IoU needed for a detection to count (acceptance criterion of the project). */
const MIN_IOU = 0.5;

/**
 * Detections the inertial estimators did not make at the time of writing, listed so the suite states exactly which
 * acceptance cases are open: any miss not listed here fails the test; a listed one that gets detected is reported
 * on stdout so the entry can be deleted.
 */
const KNOWN_MISSES: Partial<Record<string, string[]>> = {};
/** Faulty runs that tie clean runs because their only fault is one of the known misses above. */
const KNOWN_UNRANKED: string[] = [];

let fleet: AnalysedRun[] = [];
beforeAll(async () => {
  fleet = await analyseFleet();
}, 240_000);

interface Tally {
  detected: number;
  missed: number;
  falseAlarms: number;
}

function detectionTable(runs: AnalysedRun[]): Map<string, Tally> {
  const table = new Map<string, Tally>(FAULT_KINDS.map((k) => [k, { detected: 0, missed: 0, falseAlarms: 0 }]));
  for (const r of runs) {
    const flags = raised(r.report);
    const injected = new Set(r.faults.map((f) => f.kind));
    for (const f of r.faults) {
      const iou = intersectionOverUnion(flags.filter((x) => x.kind === f.kind), f, r.report.run.t0);
      const row = table.get(f.kind)!;
      if (iou >= MIN_IOU) row.detected++;
      else row.missed++;
    }
    for (const kind of new Set(flags.map((f) => f.kind))) {
      if (injected.has(kind)) continue;
      const row = table.get(kind) ?? { detected: 0, missed: 0, falseAlarms: 0 };
      row.falseAlarms++;
      table.set(kind, row);
    }
  }
  return table;
}

const byName = (robot: string, run: string): Report => fleet.find((r) => r.entry.robot_id === robot && r.entry.run_id === run)!.report;

describe('demo fleet (seed-runs/)', () => {
  it('prints the detection table (kind × detected / missed / false alarms, IoU ≥ 0.5, warn or critical flags)', () => {
    const table = detectionTable(fleet);
    const lines = ['kind                 detected missed false-alarms'];
    for (const [k, t] of table) lines.push(`${k.padEnd(20)} ${String(t.detected).padStart(8)} ${String(t.missed).padStart(6)} ${String(t.falseAlarms).padStart(12)}`);
    process.stdout.write(`\n${lines.join('\n')}\n`);
    expect(fleet).toHaveLength(24);
  });

  for (const kind of FAULT_KINDS) {
    it(`detects every injected ${kind} with its interval overlapping the truth (IoU ≥ ${MIN_IOU})`, () => {
      const misses: string[] = [];
      let injected = 0;
      for (const r of fleet) {
        for (const f of r.faults.filter((x) => x.kind === kind)) {
          injected++;
          const iou = intersectionOverUnion(raised(r.report).filter((x) => x.kind === kind), f, r.report.run.t0);
          if (iou < MIN_IOU) misses.push(`${r.entry.robot_id}/${r.entry.run_id}`);
        }
      }
      expect(injected).toBeGreaterThan(0);
      const known = KNOWN_MISSES[kind] ?? [];
      const fixed = known.filter((m) => !misses.includes(m));
      if (fixed.length) process.stdout.write(`${kind}: now detected, remove from KNOWN_MISSES: ${fixed.join(', ')}\n`);
      expect(misses.filter((m) => !known.includes(m))).toEqual([]);
    });
  }

  it('raises no flag above info on clean runs', () => {
    for (const r of fleet.filter((x) => x.faults.length === 0)) {
      expect(raised(r.report).map((f) => `${r.entry.robot_id}/${r.entry.run_id} ${f.id}`)).toEqual([]);
      expect(r.report.verdict).toBe('sound');
    }
  });

  it('scores every faulty run below every clean run', () => {
    const clean = fleet.filter((r) => r.faults.length === 0).map((r) => r.report.score);
    const worstClean = Math.min(...clean);
    const above = fleet.filter((r) => r.faults.length > 0 && r.report.score >= worstClean);
    expect(above.map((r) => `${r.entry.robot_id}/${r.entry.run_id}`).filter((id) => !KNOWN_UNRANKED.includes(id))).toEqual([]);
  });

  it('flags the false loop closure as loop-mismatch, excludes it and keeps the consistent loops', () => {
    const rep = byName('heron-01', 'r0303-1500');
    const excluded = rep.loops.filter((l) => !l.accepted);
    expect(excluded).toHaveLength(1);
    expect(excluded[0]!.chi2!).toBeGreaterThan(excluded[0]!.chi2_threshold!);
    expect(rep.flags.filter((f) => f.kind === 'loop-mismatch')).toHaveLength(1);
    expect(rep.loops.filter((l) => l.accepted).length).toBeGreaterThan(0);
    expect(rep.corrections.loops_excluded).toEqual([excluded[0]!.id]);
  });

  it('locates a 3 m GNSS divergence (100–140 s) within 5 s', () => {
    const rep = byName('heron-01', 'r0305-1300');
    const g = rep.flags.filter((f) => f.kind === 'gnss-divergence');
    expect(g).toHaveLength(1);
    expect(Math.abs(g[0]!.t_start - 100)).toBeLessThanOrEqual(5);
    expect(Math.abs(g[0]!.t_end - 140)).toBeLessThanOrEqual(5);
    expect(Math.abs(g[0]!.value! - 3)).toBeLessThan(1);
  });
});

describe('false loops and GNSS divergence on more simulated runs', () => {
  const run = (seed: number, faults: FaultSpec[]) => {
    const sim = simulateRun(makeRunSpec({ seed, durationS: 150, site: 'northgate-yard', robotId: 'heron-01', faults }));
    return analyzeRunDetailed({ manifest: RunManifest.parse(sim.manifest), imu: sim.imu, odometry: sim.odometry, gnss: sim.gnss, loops: sim.loops }).report;
  };
  for (const [seed, magnitude, startS] of [[31, 6, 30], [32, 10, 60]] as const) {
    it(`excludes a false loop of ≥ ${magnitude} m near ${startS} s and keeps the true ones (seed ${seed})`, () => {
      const rep = run(seed, [{ kind: 'loop-mismatch', magnitude, startS }]);
      const excluded = rep.loops.filter((l) => !l.accepted);
      expect(excluded).toHaveLength(1);
      expect(Math.abs(excluded[0]!.t_a - startS)).toBeLessThanOrEqual(1);
      expect(rep.flags.filter((f) => f.kind === 'loop-mismatch').map((f) => f.severity)).toEqual(['critical']);
      expect(rep.loops.filter((l) => l.accepted).length).toBeGreaterThan(0);
    });
  }
  for (const [seed, startS, endS] of [[33, 40, 70], [34, 90, 120]] as const) {
    it(`locates a 3 m GNSS divergence at ${startS}–${endS} s within 5 s (seed ${seed})`, () => {
      const rep = run(seed, [{ kind: 'gnss-divergence', magnitude: 3, startS, endS }]);
      const g = rep.flags.filter((f) => f.kind === 'gnss-divergence');
      expect(g).toHaveLength(1);
      expect(Math.abs(g[0]!.t_start - startS)).toBeLessThanOrEqual(5);
      expect(Math.abs(g[0]!.t_end - endS)).toBeLessThanOrEqual(5);
    });
  }
});

/** True closure error of a loop: odometry relative pose vs the true relative pose of the odometry body (% of path). */
function trueClosurePct(sim: ReturnType<typeof simulateRun>, iA: number, iB: number, pathLen: number): number {
  const s = sim.scenario, st = createKinState(), o = sim.odometry;
  const bodyAt = (i: number) => {
    s.evaluate(o.tTrue[i]!, st);
    const p = pose.create();
    quat.multiply(p.q, st.q, s.imuTOdomTrue.q);
    quat.rotateVec3(p.t, st.q, s.imuTOdomTrue.t);
    for (let k = 0; k < 3; k++) p.t[k] = (p.t[k]! + st.p[k]!) / s.spec.scale;
    return p;
  };
  const trueRel = pose.relative(pose.create(), bodyAt(iA), bodyAt(iB));
  const odoRel = pose.relative(pose.create(), pose.fromColumns(pose.create(), o, iA), pose.fromColumns(pose.create(), o, iB));
  return (100 * Math.hypot(odoRel.t[0]! - trueRel.t[0]!, odoRel.t[1]! - trueRel.t[1]!, odoRel.t[2]! - trueRel.t[2]!)) / pathLen;
}

describe('loop drift against simulator truth', () => {
  for (const seed of [21, 22]) {
    it(`measures the closure drift of loops over 100 m within ±0.2 % of the truth (seed ${seed})`, () => {
      const sim = simulateRun(makeRunSpec({ seed, durationS: 420, site: 'northgate-yard', robotId: 'plover-01' }));
      const data = { manifest: RunManifest.parse(sim.manifest), imu: sim.imu, odometry: sim.odometry, gnss: sim.gnss, loops: sim.loops };
      const { report } = analyzeRunDetailed(data);
      const t0 = report.run.t0, o = sim.odometry;
      const nearest = (t: number) => {
        let best = 0;
        for (let i = 0; i < o.n; i++) if (Math.abs(o.t[i]! - t) < Math.abs(o.t[best]! - t)) best = i;
        return best;
      };
      const long = report.loops.filter((l) => l.accepted && l.source === 'robot' && l.path_length_m >= 100);
      expect(long.length).toBeGreaterThan(0);
      for (const l of long) {
        const truth = trueClosurePct(sim, nearest(l.t_a + t0), nearest(l.t_b + t0), l.path_length_m);
        // ±0.2 % of path: the acceptance tolerance of the project (loops carry 3–5 cm measurement noise).
        expect(Math.abs(l.translation_error_pct - truth)).toBeLessThanOrEqual(0.2);
      }
      // No loop or GNSS flag on this clean run (the inertial kinds are covered by the fleet cases above).
      const mine = ['loop-mismatch', 'loop-drift', 'gnss-divergence'];
      expect(report.flags.filter((f) => f.severity !== 'info' && mine.includes(f.kind))).toEqual([]);
    });
  }
});
