import type { LoopColumns, OdometryColumns } from '@plumbline/bundle';
import type { LoopSource, PolicyThresholds, RunManifest } from '@plumbline/contracts';
import { pose, quat, so3, stats } from '@plumbline/geometry';
import type { InertialFinding } from '../estimators/types.ts';
import type { GnssComparison } from '../gnss/gnss-compare.ts';
import { collectLoopCandidates, type LoopCandidate } from './candidates.ts';
import { selectKeyframesBounded } from './keyframes.ts';
import { gateLoops } from './loop-gating.ts';
import { createPoseGraph, type GraphMode, type PoseGraph } from './pose-graph.ts';
import { wrapAngle } from './pose-graph-edges.ts';

/** Drift allowed by the χ² gate: 3 % of path length and 0.05°/m ("suspect" drift levels, common practice). */
export const GATE_DRIFT_T = 0.03;
export const GATE_DRIFT_R_RAD_PER_M = (0.05 * Math.PI) / 180;
/** Loops shorter than this (odometry units) give no drift percentage worth flagging. */
const MIN_DRIFT_PATH = 20;

export interface LoopResult {
  source: LoopSource;
  tA: number;
  tB: number;
  pathLength: number;
  translationError: number;
  translationErrorPct: number;
  rotationErrorDeg: number;
  rotationErrorDegPerM: number;
  chi2: number | null;
  dof: number;
  chi2Threshold: number | null;
  accepted: boolean;
}

export interface LoopAnalysis {
  mode: GraphMode;
  loops: LoopResult[];
  /** Odometry indices of the keyframes and their optimised poses (odometry world, odometry units). */
  keyframes: Int32Array;
  /** Factor on the default 1 m / 10° / 1 s keyframe steps (> 1 when a long run was thinned to the node budget). */
  keyframeSpacing: number;
  optimised: PoseGraph | null;
  findings: InertialFinding[];
  /** Path-weighted mean closure error of accepted loops of at least 20 units of path, % and deg/m. */
  driftPct: { value: number; sigma: number | null } | null;
  driftDegPerM: { value: number; sigma: number | null } | null;
  solverNote: string | null;
}

const DEG = 180 / Math.PI;

/** Closure error of a candidate against the odometry: meas⁻¹ ∘ (T_A⁻¹ T_B). */
function closureError(c: LoopCandidate, odo: OdometryColumns): { t: number; rotDeg: number } {
  const a = pose.fromColumns(pose.create(), odo, c.iA), b = pose.fromColumns(pose.create(), odo, c.iB);
  const rel = pose.relative(pose.create(), a, b);
  const err = pose.relative(pose.create(), c.meas, rel);
  return { t: Math.hypot(err.t[0]!, err.t[1]!, err.t[2]!), rotDeg: c.sigmaR === null ? 0 : quat.angle(err.q) * DEG };
}

/** Planar graphs for gravity-aligned runs that stay within ±1 unit of height (ground robots). */
function chooseMode(manifest: RunManifest, odo: OdometryColumns): GraphMode {
  if (!manifest.odometry.world_gravity_aligned) return 'se3';
  let lo = Number.POSITIVE_INFINITY, hi = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < odo.n; i++) {
    lo = Math.min(lo, odo.z[i]!);
    hi = Math.max(hi, odo.z[i]!);
  }
  return hi - lo < 2 ? 'planar' : 'se3';
}

function setNode(g: PoseGraph, k: number, p: pose.Pose, R: Float64Array): void {
  if (g.mode === 'se3') {
    so3.fromQuat(R, p.q);
    g.R.set(R, k * 9);
    g.t.set(p.t, k * 3);
  } else {
    g.s.set([p.t[0]!, p.t[1]!, yawOf(p.q)], k * 3);
  }
}

function yawOf(q: Float64Array): number {
  return Math.atan2(2 * (q[0]! * q[3]! + q[1]! * q[2]!), 1 - 2 * (q[2]! * q[2]! + q[3]! * q[3]!));
}

const scratchQ = quat.create(), scratchV = new Float64Array(3);

/**
 * Sets edge e from → to with measured relative pose `rel` (pose of `to` in the body frame of `from`, whose odometry
 * pose is `a`). Planar graphs need the relative pose in the yaw-only frame of `from`: the body frame may be tilted
 * (e.g. a camera frame with z forward), so the offset goes to the world through a's full rotation and back through
 * its yaw alone.
 */
function setEdge(g: PoseGraph, e: number, from: number, to: number, a: pose.Pose, rel: pose.Pose, sigT: number, sigR: number, R: Float64Array): void {
  g.from[e] = from;
  g.to[e] = to;
  if (g.mode === 'se3') {
    so3.fromQuat(R, rel.q);
    g.measR.set(R, e * 9);
    g.measT.set(rel.t, e * 3);
  } else {
    quat.rotateVec3(scratchV, a.q, rel.t);
    const yawA = yawOf(a.q), c = Math.cos(yawA), s = Math.sin(yawA);
    quat.multiply(scratchQ, a.q, rel.q);
    const dYaw = wrapAngle(yawOf(scratchQ) - yawA);
    g.measP.set([c * scratchV[0]! + s * scratchV[1]!, -s * scratchV[0]! + c * scratchV[1]!, dYaw], e * 3);
  }
  g.infoT[e] = 1 / (sigT * sigT);
  g.infoR[e] = 1 / (sigR * sigR);
}

/** Builds the keyframe graph: odometry edges (σ grows with distance and turn) and one edge per loop candidate. */
function buildGraph(mode: GraphMode, odo: OdometryColumns, dist: Float64Array, kf: Int32Array, cands: LoopCandidate[]) {
  const n = kf.length, g = createPoseGraph(mode, n, n - 1 + cands.length);
  const nodeOf = new Map<number, number>();
  const a = pose.create(), b = pose.create(), rel = pose.create(), R = new Float64Array(9);
  for (let k = 0; k < n; k++) {
    nodeOf.set(kf[k]!, k);
    pose.fromColumns(b, odo, kf[k]!);
    setNode(g, k, b, R);
    if (k === 0) continue;
    pose.fromColumns(a, odo, kf[k - 1]!);
    pose.relative(rel, a, b);
    const d = dist[kf[k]!]! - dist[kf[k - 1]!]!;
    // Odometry edge uncertainty: 3 % of the step and 0.05°/m plus 1 % of the turn, with floors (common practice).
    const sigT = Math.max(GATE_DRIFT_T * d, 0.005);
    const sigR = Math.max(GATE_DRIFT_R_RAD_PER_M * d + 0.01 * quat.angle(rel.q), 1e-3);
    setEdge(g, k - 1, k - 1, k, a, rel, sigT, sigR, R);
  }
  const loopEdges = new Int32Array(cands.length), gates = new Float64Array(cands.length), dofs = new Int32Array(cands.length);
  cands.forEach((c, i) => {
    const e = n - 1 + i;
    // A translation-only loop (GNSS revisit) gets a negligible rotation information.
    pose.fromColumns(a, odo, c.iA);
    setEdge(g, e, nodeOf.get(c.iA)!, nodeOf.get(c.iB)!, a, c.meas, c.sigmaT, c.sigmaR ?? 1e3, R);
    loopEdges[i] = e;
    dofs[i] = mode === 'se3' ? (c.sigmaR === null ? 3 : 6) : c.sigmaR === null ? 2 : 3;
  });
  return { g, loopEdges, gates, dofs };
}

export interface LoopAnalysisInput {
  manifest: RunManifest;
  odometry: OdometryColumns;
  dist: Float64Array;
  loops: LoopColumns | null;
  gnss: GnssComparison | null;
  thresholds: PolicyThresholds;
}

/**
 * Loop consistency: collects loop candidates (robot loops, dock return, GNSS revisits), measures each closure
 * error against the odometry (translation % of path and rotation deg/m, the drift metric of Geiger et al.,
 * CVPR 2012), builds a keyframe pose graph and separates false closures (χ² above the 1 − α point: `loop-mismatch`)
 * from consistent loops that reveal drift (`loop-drift`), leaving the optimised keyframe poses for the repair.
 */
export function analyzeLoops(input: LoopAnalysisInput): LoopAnalysis {
  const { manifest, odometry: odo, dist, thresholds: th } = input;
  const mode = chooseMode(manifest, odo);
  const cands = odo.n >= 2 ? collectLoopCandidates(manifest, odo, dist, input.loops, input.gnss, th) : [];
  const { keyframes: kf, spacing } = selectKeyframesBounded(odo, dist, cands.flatMap((c) => [c.iA, c.iB]));
  const empty: LoopAnalysis = { mode, loops: [], keyframes: kf, keyframeSpacing: spacing, optimised: null, findings: [], driftPct: null, driftDegPerM: null, solverNote: null };
  if (cands.length === 0 || kf.length < 2) return empty;
  const { g, loopEdges, gates, dofs } = buildGraph(mode, odo, dist, kf, cands);
  for (let i = 0; i < cands.length; i++) gates[i] = stats.chiSquareQuantile(1 - th.loop_gate_alpha, dofs[i]!);
  const cumLen = Float64Array.from(kf, (i) => dist[i]!);
  const gating = gateLoops({ graph: g, loopEdges, cumLen, driftT: GATE_DRIFT_T, driftRRadPerM: GATE_DRIFT_R_RAD_PER_M, gates });
  const loops: LoopResult[] = cands.map((c, i) => {
    const err = closureError(c, odo);
    const L = Math.abs(dist[c.iB]! - dist[c.iA]!);
    return {
      source: c.source, tA: c.tA, tB: c.tB, pathLength: L, translationError: err.t,
      translationErrorPct: L > 0 ? (100 * err.t) / L : 0, rotationErrorDeg: err.rotDeg, rotationErrorDegPerM: L > 0 ? err.rotDeg / L : 0,
      chi2: gating.ok ? gating.chi2[i]! : null, dof: dofs[i]!, chi2Threshold: gates[i]!, accepted: gating.ok ? gating.accepted[i] === 1 : true,
    };
  });
  const findings = loopFindings(loops, th);
  return {
    mode, loops, keyframes: kf, keyframeSpacing: spacing, optimised: gating.ok ? g : null, findings,
    driftPct: weightedDrift(loops, (l) => l.translationErrorPct), driftDegPerM: weightedDrift(loops, (l) => l.rotationErrorDegPerM),
    solverNote: gating.ok ? null : `pose graph not solved: ${gating.reason}`,
  };
}

function loopFindings(loops: LoopResult[], th: PolicyThresholds): InertialFinding[] {
  const out: InertialFinding[] = [];
  const driftWarn = th['loop-drift'].warn ?? Number.POSITIVE_INFINITY;
  for (const l of loops) {
    if (!l.accepted && l.chi2 !== null && l.chi2Threshold !== null) {
      out.push({ kind: 'loop-mismatch', tStart: l.tA, tEnd: l.tB, value: l.chi2 / l.chi2Threshold, unit: 'chi2/gate', detail: `${l.source} loop excluded: χ² ${l.chi2.toFixed(1)} > ${l.chi2Threshold.toFixed(3)} (${l.dof} dof)`,
        params: { chi2: l.chi2, gate: l.chi2Threshold, dof: l.dof, confidencePct: 100 * (1 - th.loop_gate_alpha) } });
    } else if (l.accepted && l.pathLength >= MIN_DRIFT_PATH && l.translationErrorPct >= driftWarn) {
      out.push({ kind: 'loop-drift', tStart: l.tA, tEnd: l.tB, value: l.translationErrorPct, unit: '%', detail: `${l.source} loop closes with ${l.translationErrorPct.toFixed(2)} % of ${l.pathLength.toFixed(0)} m and ${l.rotationErrorDegPerM.toFixed(4)} deg/m` });
    }
  }
  return out;
}

function weightedDrift(loops: LoopResult[], f: (l: LoopResult) => number): { value: number; sigma: number | null } | null {
  const use = loops.filter((l) => l.accepted && l.pathLength >= MIN_DRIFT_PATH);
  if (use.length === 0) return null;
  let sw = 0, s = 0;
  for (const l of use) {
    sw += l.pathLength;
    s += l.pathLength * f(l);
  }
  const mean = s / sw;
  if (use.length < 2) return { value: mean, sigma: null };
  let v = 0;
  for (const l of use) v += l.pathLength * (f(l) - mean) ** 2;
  return { value: mean, sigma: Math.sqrt(v / sw / (use.length - 1)) };
}
