import { nearestRotation, type Mat3 } from '@plumbline/geometry';
import { patternCholesky, type PoseGraph, type PoseGraphSolver } from './pose-graph.ts';

export type InitResult = { ok: true } | { ok: false; reason: string };

/**
 * Stiffness of the gauge prior relative to the largest Laplacian diagonal: holds the anchor's increment at zero to
 * about 1e-6 of the others, far below any tolerance that matters here, while the factorisation stays well scaled.
 */
const ANCHOR_FACTOR = 1e6;
/** Ridge relative to the largest edge weight: keeps a node outside the anchor's component where it is. */
const RIDGE_FACTOR = 1e-12;

interface Laplacian {
  diag: Float64Array;
  off: Float64Array;
}

/**
 * Weighted connection Laplacian of the active edges for b×b blocks, from Σ w_e·‖x_j − x_i·M_e‖²: diagonal blocks
 * Σ w·I on the `to` side and Σ w·M·Mᵀ on the `from` side, off-diagonal blocks −w·M (oriented to the stored pair),
 * a stiff prior on the anchor and a tiny ridge everywhere. `M` null means M_e = I: the scalar graph Laplacian.
 */
function laplacian(g: PoseGraph, sv: PoseGraphSolver, b: number, w: Float64Array, anchor: number, M: Float64Array | null): Laplacian {
  const bb = b * b, diag = new Float64Array(g.n * bb), off = new Float64Array((sv.pairs.length / 2) * bb);
  const identity = new Float64Array(bb);
  for (let r = 0; r < b; r++) identity[r * (b + 1)] = 1;
  const src = M ?? identity;
  let wMax = 0;
  for (let e = 0; e < g.m; e++) {
    if (!g.active[e]) continue;
    const we = w[e]!, i = g.from[e]!, j = g.to[e]!, po = sv.pairOf[e]! * bb, fl = sv.flipped[e]!, mo = M ? e * bb : 0;
    wMax = Math.max(wMax, we);
    for (let r = 0; r < b; r++) {
      diag[j * bb + r * (b + 1)]! += we;
      for (let c = 0; c < b; c++) {
        let mmT = 0;
        for (let k = 0; k < b; k++) mmT += src[mo + r * b + k]! * src[mo + c * b + k]!;
        diag[i * bb + r * b + c]! += we * mmT;
        // Block H[i, j] = −w·M; the stored pair (lo, hi) holds H[lo, hi], so a flipped edge stores the transpose.
        if (fl) off[po + c * b + r]! -= we * src[mo + r * b + c]!;
        else off[po + r * b + c]! -= we * src[mo + r * b + c]!;
      }
    }
  }
  let dMax = 0;
  for (let k = 0; k < g.n * b; k++) dMax = Math.max(dMax, diag[Math.floor(k / b) * bb + (k % b) * (b + 1)]!);
  for (let k = 0; k < g.n; k++) for (let r = 0; r < b; r++) diag[k * bb + r * (b + 1)]! += RIDGE_FACTOR * wMax;
  for (let r = 0; r < b; r++) diag[anchor * bb + r * (b + 1)]! += ANCHOR_FACTOR * dMax;
  return { diag, off };
}

/**
 * Positions with the rotations held: minimises Σ w_t·|t_j − t_i − R_i·m_e|² over the active edges, a scalar
 * Laplacian solve per axis on the increments from the current positions (isotropic information makes the axes
 * independent). `rot(e, out)` writes R_i·m_e of edge e (world frame) into out.
 */
function solvePositions(
  g: PoseGraph, sv: PoseGraphSolver, pos: Float64Array, stride: number, axes: number, anchor: number,
  rot: (e: number, out: Float64Array) => void, out: Float64Array,
): InitResult {
  const lap = laplacian(g, sv, 1, g.infoT, anchor, null);
  const chol = patternCholesky(sv, 1);
  const f = chol.factorize(lap.diag, lap.off);
  if (!f.ok) return f;
  const rhs = new Float64Array(g.n * axes), v = new Float64Array(3);
  for (let e = 0; e < g.m; e++) {
    if (!g.active[e]) continue;
    const i = g.from[e]!, j = g.to[e]!, w = g.infoT[e]!;
    rot(e, v);
    for (let a = 0; a < axes; a++) {
      const c = pos[j * stride + a]! - pos[i * stride + a]! - v[a]!;
      rhs[a * g.n + j]! -= w * c;
      rhs[a * g.n + i]! += w * c;
    }
  }
  for (let a = 0; a < axes; a++) {
    const col = rhs.subarray(a * g.n, (a + 1) * g.n);
    chol.solve(col, col);
    for (let k = 0; k < g.n; k++) out[k * stride + a] = pos[k * stride + a]! + col[k]!;
  }
  return { ok: true };
}

/**
 * Chordal relaxation of the rotations (b = 2 planar, 3 in SE(3)): Σ w_R·‖X_j − X_i·M_e‖²_F over unconstrained b×b
 * matrices X. Each row x of X obeys x_j = x_i·M_e on its own, so the rows share one b×b-block system; it is solved
 * for increments from the current rotations `X0` (n·b², row-major), which it overwrites with X0 + increment.
 * `M` holds the measured relative rotation of each edge (m·b²).
 */
function chordalRotations(g: PoseGraph, sv: PoseGraphSolver, b: number, X0: Float64Array, M: Float64Array, anchor: number): InitResult {
  const bb = b * b;
  const lap = laplacian(g, sv, b, g.infoR, anchor, M);
  const chol = patternCholesky(sv, b);
  const f = chol.factorize(lap.diag, lap.off);
  if (!f.ok) return f;
  const N = g.n * b, rhs = new Float64Array(b * N), E = new Float64Array(bb);
  for (let e = 0; e < g.m; e++) {
    if (!g.active[e]) continue;
    const i = g.from[e]! * bb, j = g.to[e]! * bb, w = g.infoR[e]!, mo = e * bb;
    // E = X_j − X_i·M at the current state; per row r: rhs_j −= w·E_r, rhs_i += w·M·E_rᵀ.
    for (let r = 0; r < b; r++) {
      for (let c = 0; c < b; c++) {
        let xm = 0;
        for (let k = 0; k < b; k++) xm += X0[i + r * b + k]! * M[mo + k * b + c]!;
        E[r * b + c] = X0[j + r * b + c]! - xm;
      }
      for (let c = 0; c < b; c++) {
        rhs[r * N + g.to[e]! * b + c]! -= w * E[r * b + c]!;
        let me = 0;
        for (let k = 0; k < b; k++) me += M[mo + c * b + k]! * E[r * b + k]!;
        rhs[r * N + g.from[e]! * b + c]! += w * me;
      }
    }
  }
  for (let r = 0; r < b; r++) {
    const col = rhs.subarray(r * N, (r + 1) * N);
    chol.solve(col, col);
    for (let k = 0; k < g.n; k++) for (let c = 0; c < b; c++) X0[k * bb + r * b + c]! += col[k * b + c]!;
  }
  return { ok: true };
}

/** Planar: headings by the chordal relaxation in 2D (each row (cos θ, −sin θ) normalised), then positions. */
function initPlanar(g: PoseGraph, sv: PoseGraphSolver, anchor: number): InitResult {
  const X = new Float64Array(g.n * 4), M = new Float64Array(g.m * 4);
  const rot2 = (out: Float64Array, o: number, th: number) => {
    const c = Math.cos(th), s = Math.sin(th);
    out[o] = c; out[o + 1] = -s; out[o + 2] = s; out[o + 3] = c;
  };
  for (let k = 0; k < g.n; k++) rot2(X, k * 4, g.s[k * 3 + 2]!);
  for (let e = 0; e < g.m; e++) rot2(M, e * 4, g.measP[e * 3 + 2]!);
  const f = chordalRotations(g, sv, 2, X, M, anchor);
  if (!f.ok) return f;
  const next = new Float64Array(g.s.length);
  // Both rows, (cos θ, −sin θ) and (sin θ, cos θ), carry the heading; summing sines and cosines averages them.
  for (let k = 0; k < g.n; k++) next[k * 3 + 2] = Math.atan2(X[k * 4 + 2]! - X[k * 4 + 1]!, X[k * 4]! + X[k * 4 + 3]!);
  const p = solvePositions(g, sv, g.s, 3, 2, anchor, (e, v) => {
    const th = next[g.from[e]! * 3 + 2]!, c = Math.cos(th), s = Math.sin(th), mx = g.measP[e * 3]!, my = g.measP[e * 3 + 1]!;
    v[0] = c * mx - s * my;
    v[1] = s * mx + c * my;
  }, next);
  if (!p.ok) return p;
  g.s.set(next);
  return { ok: true };
}

/** SE(3): rotations by the chordal relaxation, each projected onto SO(3), then positions. */
function initSe3(g: PoseGraph, sv: PoseGraphSolver, anchor: number): InitResult {
  const X = Float64Array.from(g.R);
  const f = chordalRotations(g, sv, 3, X, g.measR, anchor);
  if (!f.ok) return f;
  const R = new Float64Array(g.R.length), Xk = new Float64Array(9) as Mat3, Rk = new Float64Array(9) as Mat3;
  for (let k = 0; k < g.n; k++) {
    Xk.set(X.subarray(k * 9, k * 9 + 9));
    if (!nearestRotation(Rk, Xk)) return { ok: false, reason: `chordal rotation of node ${k} not finite` };
    R.set(Rk, k * 9);
  }
  const t = new Float64Array(g.t.length);
  const p = solvePositions(g, sv, g.t, 3, 3, anchor, (e, v) => {
    const o = g.from[e]! * 9, m = g.measT;
    for (let a = 0; a < 3; a++) v[a] = R[o + a * 3]! * m[e * 3]! + R[o + a * 3 + 1]! * m[e * 3 + 1]! + R[o + a * 3 + 2]! * m[e * 3 + 2]!;
  }, t);
  if (!p.ok) return p;
  g.R.set(R);
  g.t.set(t);
  return { ok: true };
}

/**
 * Initial pose-graph estimate from linear solves over the active edges, so that Levenberg–Marquardt starts near the
 * optimum instead of at the odometry: rotations first, then positions with the rotations held (L. Carlone, R. Tron,
 * K. Daniilidis & F. Dellaert, "Initialization techniques for 3D SLAM: a survey on rotation estimation and its use
 * in pose graph optimization", ICRA 2015). Planar graphs estimate headings linearly after regularising the measured
 * heading changes to the branch nearest the current state (LAGO: L. Carlone, R. Aragues, J. Castellanos & B. Bona,
 * "A fast and accurate approximation for planar pose graph optimization", IJRR 2014); SE(3) graphs use the chordal
 * relaxation and project each rotation onto SO(3) (nearest in Frobenius norm). Every solve is Laplacian-shaped on
 * the pose graph's pattern and reuses the solver's ordering. No robust kernel: outliers pull on this estimate, and
 * the robust optimisation that follows removes their pull. The anchor keeps its pose (gauge); nodes that no active
 * edge ties to the anchor keep theirs. Leaves the state untouched when a solve fails.
 */
export function initializePoseGraph(g: PoseGraph, sv: PoseGraphSolver, anchor = 0): InitResult {
  return g.mode === 'planar' ? initPlanar(g, sv, anchor) : initSe3(g, sv, anchor);
}
