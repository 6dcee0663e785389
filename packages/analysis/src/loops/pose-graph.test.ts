import { describe, expect, it } from 'vitest';
import { createPoseGraph, createPoseGraphSolver, edgeChi2, optimizePoseGraph, type GraphMode, type PoseGraph } from './pose-graph.ts';
import { gateLoops } from './loop-gating.ts';

/** Square of side 10 m walked with constant heading (a holonomic robot), nodes every metre: 40 nodes, closes at 0. */
function squarePositions(): Array<[number, number]> {
  const p: Array<[number, number]> = [];
  const dirs: Array<[number, number]> = [[1, 0], [0, 1], [-1, 0], [0, -1]];
  let x = 0, y = 0;
  for (const [dx, dy] of dirs) for (let k = 0; k < 10; k++) {
    p.push([x, y]);
    x += dx;
    y += dy;
  }
  return p;
}

/** Chain graph over the given true positions, odometry biased by `bias` per edge, plus loop edges (from, to). */
function buildGraph(
  mode: GraphMode, truth: Array<[number, number]>, bias: [number, number], loops: Array<[number, number]>, infoLoop: number, infoRot = 1e8,
): PoseGraph {
  const n = truth.length, m = n - 1 + loops.length;
  const g = createPoseGraph(mode, n, m);
  let ox = 0, oy = 0;
  for (let k = 0; k < n; k++) {
    if (k > 0) {
      ox += truth[k]![0] - truth[k - 1]![0] + bias[0];
      oy += truth[k]![1] - truth[k - 1]![1] + bias[1];
    }
    if (mode === 'se3') {
      g.R.set([1, 0, 0, 0, 1, 0, 0, 0, 1], k * 9);
      g.t.set([ox, oy, 0], k * 3);
    } else g.s.set([ox, oy, 0], k * 3);
  }
  const setEdge = (e: number, a: number, b: number, dx: number, dy: number, info: number) => {
    g.from[e] = a;
    g.to[e] = b;
    if (mode === 'se3') {
      g.measR.set([1, 0, 0, 0, 1, 0, 0, 0, 1], e * 9);
      g.measT.set([dx, dy, 0], e * 3);
    } else g.measP.set([dx, dy, 0], e * 3);
    g.infoT[e] = info;
    g.infoR[e] = infoRot;
  };
  for (let k = 0; k + 1 < n; k++) setEdge(k, k, k + 1, truth[k + 1]![0] - truth[k]![0] + bias[0], truth[k + 1]![1] - truth[k]![1] + bias[1], 100);
  loops.forEach(([a, b], i) => setEdge(n - 1 + i, a, b, truth[b]![0] - truth[a]![0], truth[b]![1] - truth[a]![1], infoLoop));
  return g;
}

const pos = (g: PoseGraph, k: number): [number, number] => (g.mode === 'se3' ? [g.t[k * 3]!, g.t[k * 3 + 1]!] : [g.s[k * 3]!, g.s[k * 3 + 1]!]);

for (const mode of ['planar', 'se3'] as const) {
  describe(`pose graph (${mode}): square loop with known translation drift`, () => {
    it('spreads the misclosure linearly along the chain (exact linear-Gaussian answer)', () => {
      // Closing edge 39 → 0 plus edge 0→39 odometry chain of N = 39 edges with equal information w and a loop of
      // information wL. For a linear chain, node k moves by −k·e/(N + w/wL) where e is the misclosure.
      // (Least squares on a cycle: standard result, e.g. Grisetti et al. 2010; re-derived by hand.)
      const truth = squarePositions(), bias: [number, number] = [0.01, -0.02];
      const g = buildGraph(mode, truth, bias, [[39, 0]], 1e4);
      const N = 39, e = [N * bias[0], N * bias[1]], denom = N + 100 / 1e4;
      const res = optimizePoseGraph(g, createPoseGraphSolver(g));
      expect(res.ok).toBe(true);
      for (const k of [0, 10, 20, 39]) {
        const odo = [truth[k]![0] + k * bias[0], truth[k]![1] + k * bias[1]];
        const [x, y] = pos(g, k);
        // Tolerance 2e-5 m: rotations are held by a stiff (1e8 rad⁻²) but finite information, so the problem is linear
        // only up to a coupling of order w_t·L²/w_R ≈ 1e-4 relative; the measured deviation is ~2e-6 m.
        expect(Math.abs(x - (odo[0]! - (k * e[0]!) / denom))).toBeLessThan(2e-5);
        expect(Math.abs(y - (odo[1]! - (k * e[1]!) / denom))).toBeLessThan(2e-5);
      }
      expect(res.finalCost).toBeLessThan(res.initialCost);
    });

    it('rejects a false loop with χ² far above the 95 % gate and keeps the true one', () => {
      // Gate 12.592 (6 dof) / 7.815 (3 dof): NIST/SEMATECH e-Handbook §1.3.6.7.4, upper 5 % points.
      const gate = mode === 'se3' ? 12.592 : 7.815;
      const truth = squarePositions();
      const g = buildGraph(mode, truth, [0.002, 0.001], [[39, 0], [5, 25]], 1e2);
      // Corrupt the second loop: claims node 25 is where node 5 is (truth: 10 m apart) — a perceptual alias.
      const e = g.m - 1;
      if (mode === 'se3') g.measT.set([0, 0, 0], e * 3);
      else g.measP.set([0, 0, 0], e * 3);
      const cumLen = Float64Array.from({ length: g.n }, (_, k) => k);
      const res = gateLoops({
        graph: g, loopEdges: Int32Array.of(g.m - 2, g.m - 1), cumLen, driftT: 0.03, driftRRadPerM: 0.001, gates: Float64Array.of(gate, gate),
      });
      expect(res.ok).toBe(true);
      expect(Array.from(res.accepted)).toEqual([1, 0]);
      expect(res.chi2[1]!).toBeGreaterThan(gate);
      expect(res.chi2[0]!).toBeLessThan(gate);
      expect(edgeChi2(g, g.m - 2)).toBeLessThan(gate);
    });
  });
}

describe('pose graph (se3): rotation drift around a square with turns', () => {
  it('closes a loop with yaw drift and brings positions back near the truth', () => {
    // Robot turns 90° at each corner; odometry yaw drifts 0.2° per metre (8° round the loop).
    const n = 40, g = createPoseGraph('se3', n, n);
    const truthX: number[] = [], truthY: number[] = [];
    let x = 0, y = 0, th = 0, ox = 0, oy = 0, oth = 0;
    const drift = (0.2 * Math.PI) / 180;
    for (let k = 0; k < n; k++) {
      truthX.push(x);
      truthY.push(y);
      g.t.set([ox, oy, 0], k * 3);
      g.R.set([Math.cos(oth), -Math.sin(oth), 0, Math.sin(oth), Math.cos(oth), 0, 0, 0, 1], k * 9);
      const turn = k % 10 === 9 ? Math.PI / 2 : 0;
      if (k + 1 < n) {
        g.from[k] = k;
        g.to[k] = k + 1;
        const mth = turn + drift;
        g.measT.set([1, 0, 0], k * 3);
        g.measR.set([Math.cos(mth), -Math.sin(mth), 0, Math.sin(mth), Math.cos(mth), 0, 0, 0, 1], k * 9);
        g.infoT[k] = 100;
        g.infoR[k] = 1e4;
      }
      x += Math.cos(th); y += Math.sin(th); th += turn;
      ox += Math.cos(oth); oy += Math.sin(oth); oth += turn + drift;
    }
    // Loop: node 39 → node 0. Truth: node 0 seen from node 39 (heading 270°) is one metre ahead, turned by +90°.
    const e = n - 1;
    g.from[e] = 39; g.to[e] = 0;
    g.measT.set([1, 0, 0], e * 3);
    g.measR.set([0, -1, 0, 1, 0, 0, 0, 0, 1], e * 9);
    g.infoT[e] = 1e4; g.infoR[e] = 1e6;
    const before = Math.hypot(g.t[30 * 3]! - truthX[30]!, g.t[30 * 3 + 1]! - truthY[30]!);
    const res = optimizePoseGraph(g, createPoseGraphSolver(g));
    expect(res.ok).toBe(true);
    let worst = 0;
    for (let k = 0; k < n; k++) worst = Math.max(worst, Math.hypot(g.t[k * 3]! - truthX[k]!, g.t[k * 3 + 1]! - truthY[k]!));
    // Common practice: a closed loop removes most of the drift; the residual comes from spreading yaw error evenly.
    expect(before).toBeGreaterThan(0.8);
    expect(worst).toBeLessThan(0.25);
  });
});
