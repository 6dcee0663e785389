import { createPoseGraphSolver, graphDim, optimizePoseGraph, type PoseGraph, type PoseGraphSolver } from './pose-graph.ts';
import { se3Edge, planarEdge } from './pose-graph-edges.ts';

/**
 * χ² gating of loop edges in a pose graph: separates false loop closures from consistent loops.
 *
 * Method: optimise with every candidate loop under a Huber kernel (threshold √gate), then test each loop's
 * innovation — its residual at the optimum — against the covariance of the loop measurement plus the odometry
 * uncertainty accumulated along the path between its ends: χ² = |r_t|²/(σ_loop,t² + σ_path,t²) +
 * |r_φ|²/(σ_loop,φ² + σ_path,φ²). A loop with χ² above the gate (the 1 − α point of χ² with the edge's degrees of
 * freedom: 6 in SE(3), 3 planar) is excluded, the worst first, and the graph is re-solved from the odometry
 * until no remaining loop fails (the switching/"gating" scheme of E. Olson, "Recognizing places using spectrally
 * clustered local matches", RAS 2009, in its simple χ²-test form; Grisetti et al. 2010 for the graph).
 */
export interface GatingInput {
  graph: PoseGraph;
  /** Edge indices of loop edges (the rest are odometry). */
  loopEdges: Int32Array;
  /** Cumulative odometry variance along the keyframe chain, per node: translation m², rotation rad². */
  cumVarT: Float64Array;
  cumVarR: Float64Array;
  /** χ² gate for the graph's degrees of freedom. */
  gate: number;
  maxRounds?: number;
}

export interface GatingResult {
  ok: boolean;
  reason: string | null;
  /** Per loop edge (same order as loopEdges): innovation χ² at the final optimum and acceptance. */
  chi2: Float64Array;
  accepted: Uint8Array;
  rounds: number;
  iterations: number;
  solver: PoseGraphSolver;
}

const r = new Float64Array(6), Ji = new Float64Array(36), Jj = new Float64Array(36);

function innovationChi2(g: PoseGraph, e: number, cumVarT: Float64Array, cumVarR: Float64Array): number {
  const a = g.from[e]!, b = g.to[e]!;
  if (g.mode === 'se3') se3Edge(g.R, g.t, a, b, g.measR, e * 9, g.measT, e * 3, r, Ji, Jj);
  else planarEdge(g.s, a, b, g.measP, e * 3, r, Ji, Jj);
  const nt = g.mode === 'se3' ? 3 : 2, d = graphDim(g);
  const varT = 1 / g.infoT[e]! + Math.abs(cumVarT[b]! - cumVarT[a]!);
  const varR = 1 / g.infoR[e]! + Math.abs(cumVarR[b]! - cumVarR[a]!);
  let ct = 0, cr = 0;
  for (let k = 0; k < nt; k++) ct += r[k]! ** 2;
  for (let k = nt; k < d; k++) cr += r[k]! ** 2;
  return ct / varT + cr / varR;
}

export function gateLoops(input: GatingInput): GatingResult {
  const { graph: g, loopEdges, gate } = input;
  const maxRounds = input.maxRounds ?? 12;
  const solver = createPoseGraphSolver(g);
  const init = { R: Float64Array.from(g.R), t: Float64Array.from(g.t), s: Float64Array.from(g.s) };
  const L = loopEdges.length;
  const chi2 = new Float64Array(L);
  const accepted = new Uint8Array(L).fill(1);
  const k = Math.sqrt(gate);
  for (let i = 0; i < L; i++) {
    g.huber[loopEdges[i]!] = k;
    g.active[loopEdges[i]!] = 1;
  }
  let rounds = 0, iterations = 0;
  for (; rounds < maxRounds; rounds++) {
    g.R.set(init.R);
    g.t.set(init.t);
    g.s.set(init.s);
    const res = optimizePoseGraph(g, solver);
    iterations += res.iterations;
    if (!res.ok) return { ok: false, reason: res.reason, chi2, accepted, rounds, iterations, solver };
    let worst = -1;
    for (let i = 0; i < L; i++) {
      chi2[i] = innovationChi2(g, loopEdges[i]!, input.cumVarT, input.cumVarR);
      if (accepted[i] && chi2[i]! > gate && (worst < 0 || chi2[i]! > chi2[worst]!)) worst = i;
    }
    if (worst < 0) break;
    // Exclude the worst, and any loop that is an order of magnitude beyond the gate, then re-solve.
    for (let i = 0; i < L; i++) {
      if (accepted[i] && (i === worst || chi2[i]! > 10 * gate)) {
        accepted[i] = 0;
        g.active[loopEdges[i]!] = 0;
      }
    }
  }
  return { ok: true, reason: null, chi2, accepted, rounds: rounds + 1, iterations, solver };
}
