import { createBlockCholesky, so3, type BlockCholesky } from '@plumbline/geometry';
import { PLANAR_DIM, SE3_DIM, planarEdge, se3Edge, wrapAngle } from './pose-graph-edges.ts';
import { addSe3Edge } from './pose-graph-se3-blocks.ts';

export type GraphMode = 'se3' | 'planar';

/**
 * A pose graph in columnar form. Node states: SE(3) mode `R` (n·9 row-major rotations) and `t` (n·3, metres);
 * planar mode `s` (n·3: x m, y m, θ rad). Edge e joins from[e] → to[e] with the measured pose of `to` seen from
 * `from`: SE(3) `measR` (m·9) and `measT` (m·3); planar `measP` (m·3). Information is isotropic per edge:
 * `infoT` (1/m²) on translation and `infoR` (1/rad²) on rotation. `huber[e]` > 0 applies a Huber kernel with that
 * threshold on √χ²; `active[e]` = 0 leaves the edge out (its slot stays in the sparsity pattern).
 */
export interface PoseGraph {
  mode: GraphMode;
  n: number;
  m: number;
  R: Float64Array;
  t: Float64Array;
  s: Float64Array;
  from: Int32Array;
  to: Int32Array;
  measR: Float64Array;
  measT: Float64Array;
  measP: Float64Array;
  infoT: Float64Array;
  infoR: Float64Array;
  huber: Float64Array;
  active: Uint8Array;
}

export function createPoseGraph(mode: GraphMode, n: number, m: number): PoseGraph {
  const se3 = mode === 'se3';
  return {
    mode, n, m,
    R: new Float64Array(se3 ? n * 9 : 0),
    t: new Float64Array(se3 ? n * 3 : 0),
    s: new Float64Array(se3 ? 0 : n * 3),
    from: new Int32Array(m),
    to: new Int32Array(m),
    measR: new Float64Array(se3 ? m * 9 : 0),
    measT: new Float64Array(se3 ? m * 3 : 0),
    measP: new Float64Array(se3 ? 0 : m * 3),
    infoT: new Float64Array(m),
    infoR: new Float64Array(m),
    huber: new Float64Array(m),
    active: new Uint8Array(m).fill(1),
  };
}

export function graphDim(g: PoseGraph): number {
  return g.mode === 'se3' ? SE3_DIM : PLANAR_DIM;
}

const MAX_DIM = 6;
const rBuf = new Float64Array(MAX_DIM);
const JiBuf = new Float64Array(MAX_DIM * MAX_DIM);
const JjBuf = new Float64Array(MAX_DIM * MAX_DIM);
const WJi = new Float64Array(MAX_DIM * MAX_DIM);
const WJj = new Float64Array(MAX_DIM * MAX_DIM);

/** Residual and Jacobians of edge e into the module scratch buffers. */
function evalEdge(g: PoseGraph, e: number, withJacobians: boolean): void {
  if (g.mode === 'se3') se3Edge(g.R, g.t, g.from[e]!, g.to[e]!, g.measR, e * 9, g.measT, e * 3, rBuf, JiBuf, JjBuf, withJacobians);
  else planarEdge(g.s, g.from[e]!, g.to[e]!, g.measP, e * 3, rBuf, JiBuf, JjBuf);
}

/** χ² of edge e at the current state: rᵀ·W·r with the edge's isotropic information (no robust kernel). */
export function edgeChi2(g: PoseGraph, e: number, withJacobians = false): number {
  evalEdge(g, e, withJacobians);
  const nt = g.mode === 'se3' ? 3 : 2, d = graphDim(g);
  let ct = 0, cr = 0;
  for (let a = 0; a < nt; a++) ct += rBuf[a]! ** 2;
  for (let a = nt; a < d; a++) cr += rBuf[a]! ** 2;
  return g.infoT[e]! * ct + g.infoR[e]! * cr;
}

/** Huber cost of a χ² value with threshold k on √χ² (P. Huber, Ann. Math. Statist. 35, 1964; k ≤ 0: no kernel). */
function robustCost(chi2: number, k: number): number {
  if (k <= 0) return chi2;
  const s = Math.sqrt(chi2);
  return s <= k ? chi2 : 2 * k * s - k * k;
}

/** IRLS weight of the Huber kernel: 1 inside the threshold, k/√χ² outside. */
function robustWeight(chi2: number, k: number): number {
  if (k <= 0) return 1;
  const s = Math.sqrt(chi2);
  return s <= k ? 1 : k / s;
}

/** Σ of the robust (Huber) cost over the active edges at the current state: the objective of `optimizePoseGraph`. */
export function poseGraphCost(g: PoseGraph): number {
  let c = 0;
  for (let e = 0; e < g.m; e++) if (g.active[e]) c += robustCost(edgeChi2(g, e), g.huber[e]!);
  return c;
}

export interface OptimizeResult {
  ok: boolean;
  reason: string | null;
  iterations: number;
  /** Linear solves performed (rejected damping attempts included). */
  solves: number;
  initialCost: number;
  finalCost: number;
}

/** Solver state kept between calls on the same graph (the symbolic factorisation depends on the pattern only). */
export interface PoseGraphSolver {
  chol: BlockCholesky;
  pairs: Int32Array;
  /** Pair index of each edge and whether the edge runs against the stored pair direction. */
  pairOf: Int32Array;
  flipped: Uint8Array;
  /** Factors of other block sizes on the same pattern (linear initialisation), made on first use. */
  byWidth: Map<number, BlockCholesky>;
}

export function createPoseGraphSolver(g: PoseGraph): PoseGraphSolver {
  const key = new Map<number, number>();
  const pairList: number[] = [];
  const pairOf = new Int32Array(g.m).fill(-1);
  const flipped = new Uint8Array(g.m);
  for (let e = 0; e < g.m; e++) {
    const a = g.from[e]!, b = g.to[e]!;
    if (a === b) throw new RangeError(`edge ${e} joins node ${a} to itself`);
    const lo = Math.min(a, b), hi = Math.max(a, b), k = lo * g.n + hi;
    let p = key.get(k);
    if (p === undefined) {
      p = pairList.length / 2;
      key.set(k, p);
      pairList.push(lo, hi);
    }
    pairOf[e] = p;
    flipped[e] = a === lo ? 0 : 1;
  }
  const pairs = Int32Array.from(pairList);
  const chol = createBlockCholesky(g.n, graphDim(g), pairs);
  return { chol, pairs, pairOf, flipped, byWidth: new Map([[graphDim(g), chol]]) };
}

/** Cholesky of b×b-block systems on the graph's pattern, sharing the solver's ordering (made on first use). */
export function patternCholesky(sv: PoseGraphSolver, b: number): BlockCholesky {
  let c = sv.byWidth.get(b);
  if (!c) {
    c = createBlockCholesky(sv.chol.n, b, sv.pairs, sv.chol.symbolic);
    sv.byWidth.set(b, c);
  }
  return c;
}

/** Assembles H = Σ Jᵀ·w·W·J (diagonal and pair blocks) and g = Σ Jᵀ·w·W·r over active edges (SE(3) edges by blocks). */
function assemble(g: PoseGraph, sv: PoseGraphSolver, diag: Float64Array, off: Float64Array, grad: Float64Array): void {
  const d = graphDim(g), dd = d * d, nt = g.mode === 'se3' ? 3 : 2;
  diag.fill(0);
  off.fill(0);
  grad.fill(0);
  const wv = new Float64Array(d);
  for (let e = 0; e < g.m; e++) {
    if (!g.active[e]) continue;
    const chi2 = edgeChi2(g, e, true); // also leaves r, Ji, Jj in the scratch buffers
    const w = robustWeight(chi2, g.huber[e]!);
    for (let a = 0; a < d; a++) wv[a] = w * (a < nt ? g.infoT[e]! : g.infoR[e]!);
    const i = g.from[e]!, j = g.to[e]!, p = sv.pairOf[e]!, fl = sv.flipped[e]!;
    if (d === SE3_DIM) {
      addSe3Edge(JiBuf, JjBuf, rBuf, wv[0]!, wv[3]!, diag, i * dd, j * dd, off, p * dd, fl === 1, grad, i * d, j * d);
      continue;
    }
    // W·J once per edge, then JᵀWJ blocks; the diagonal blocks are symmetric, so only their upper triangle is summed.
    for (let a = 0; a < d; a++) {
      const wa = wv[a]!;
      for (let c = 0; c < d; c++) {
        WJi[a * d + c] = wa * JiBuf[a * d + c]!;
        WJj[a * d + c] = wa * JjBuf[a * d + c]!;
      }
    }
    const di = i * dd, dj = j * dd, po = p * dd;
    for (let r = 0; r < d; r++) {
      for (let c = r; c < d; c++) {
        let hii = 0, hjj = 0;
        for (let a = 0; a < d; a++) {
          hii += JiBuf[a * d + r]! * WJi[a * d + c]!;
          hjj += JjBuf[a * d + r]! * WJj[a * d + c]!;
        }
        diag[di + r * d + c]! += hii;
        diag[dj + r * d + c]! += hjj;
        if (c !== r) {
          diag[di + c * d + r]! += hii;
          diag[dj + c * d + r]! += hjj;
        }
      }
      for (let c = 0; c < d; c++) {
        let hij = 0;
        for (let a = 0; a < d; a++) hij += JiBuf[a * d + r]! * WJj[a * d + c]!;
        // Stored pair (lo, hi): block H[lo, hi]. Edge i→j gives H[i, j] = hij; flipped means i = hi.
        if (fl) off[po + c * d + r]! += hij;
        else off[po + r * d + c]! += hij;
      }
      let gi = 0, gj = 0;
      for (let a = 0; a < d; a++) {
        gi += WJi[a * d + r]! * rBuf[a]!;
        gj += WJj[a * d + r]! * rBuf[a]!;
      }
      grad[i * d + r]! += gi;
      grad[j * d + r]! += gj;
    }
  }
}

function applyStep(g: PoseGraph, delta: Float64Array): void {
  const phi = new Float64Array(3), Rk = new Float64Array(9);
  if (g.mode === 'planar') {
    for (let k = 0; k < g.n; k++) {
      g.s[k * 3]! += delta[k * 3]!;
      g.s[k * 3 + 1]! += delta[k * 3 + 1]!;
      g.s[k * 3 + 2] = wrapAngle(g.s[k * 3 + 2]! + delta[k * 3 + 2]!);
    }
    return;
  }
  for (let k = 0; k < g.n; k++) {
    for (let a = 0; a < 3; a++) g.t[k * 3 + a]! += delta[k * 6 + a]!;
    phi[0] = delta[k * 6 + 3]!;
    phi[1] = delta[k * 6 + 4]!;
    phi[2] = delta[k * 6 + 5]!;
    for (let a = 0; a < 9; a++) Rk[a] = g.R[k * 9 + a]!;
    so3.boxPlus(Rk, Rk, phi);
    so3.orthonormalize(Rk, Rk);
    g.R.set(Rk, k * 9);
  }
}

/**
 * Levenberg–Marquardt over the pose graph (K. Levenberg 1944; D. Marquardt 1963: damping λ·diag(H)), each step
 * solved with the block-sparse Cholesky factorisation. Node `anchor` is held fixed by a stiff prior (gauge).
 * Modifies the graph state in place. Degenerate systems come back as `{ ok: false, reason }`.
 */
export function optimizePoseGraph(
  g: PoseGraph, solver: PoseGraphSolver, opts: { maxIterations?: number; anchor?: number; tolerance?: number } = {},
): OptimizeResult {
  const maxIt = opts.maxIterations ?? 30, anchor = opts.anchor ?? 0, tol = opts.tolerance ?? 1e-6;
  const d = graphDim(g), dd = d * d, N = g.n * d;
  const diag = new Float64Array(g.n * dd), off = new Float64Array((solver.pairs.length / 2) * dd);
  const grad = new Float64Array(N), shift = new Float64Array(N), delta = new Float64Array(N);
  const backup = { R: new Float64Array(g.R.length), t: new Float64Array(g.t.length), s: new Float64Array(g.s.length) };
  let cost = poseGraphCost(g);
  const initialCost = cost;
  let lambda = 1e-4, nu = 2, it = 0, solves = 0;
  for (; it < maxIt; it++) {
    assemble(g, solver, diag, off, grad);
    for (let r = 0; r < d; r++) diag[anchor * dd + r * d + r]! += 1e12;
    let improved = false;
    for (let attempt = 0; attempt < 12 && !improved; attempt++) {
      for (let k = 0; k < N; k++) shift[k] = lambda * Math.max(diag[Math.floor(k / d) * dd + (k % d) * (d + 1)]!, 1e-9);
      const f = solver.chol.factorize(diag, off, shift);
      if (!f.ok) return { ok: false, reason: f.reason, iterations: it, solves, initialCost, finalCost: cost };
      solver.chol.solve(delta, grad);
      solves++;
      // Predicted decrease of the quadratic model for δ = −(H + λD)⁻¹g: ½·δᵀ(λDδ − g), with δ = −solution.
      let predicted = 0;
      for (let k = 0; k < N; k++) {
        delta[k] = -delta[k]!;
        predicted += delta[k]! * (shift[k]! * delta[k]! - grad[k]!);
      }
      backup.R.set(g.R);
      backup.t.set(g.t);
      backup.s.set(g.s);
      applyStep(g, delta);
      const next = poseGraphCost(g);
      // Gain ratio ρ: actual over predicted decrease of Σχ² (the model decrease of Σ rᵀWr is δᵀ(λDδ − g)).
      const rho = (cost - next) / Math.max(predicted, 1e-300);
      if (next <= cost) {
        improved = true;
        const rel = (cost - next) / Math.max(cost, 1e-300);
        cost = next;
        // Damping update of H. B. Nielsen, "Damping parameter in Marquardt's method", IMM-REP-1999-05.
        lambda = Math.max(lambda * Math.max(1 / 3, 1 - (2 * rho - 1) ** 3), 1e-12);
        nu = 2;
        if (rel < tol) return { ok: true, reason: null, iterations: it + 1, solves, initialCost, finalCost: cost };
      } else {
        g.R.set(backup.R);
        g.t.set(backup.t);
        g.s.set(backup.s);
        lambda *= nu;
        nu *= 2;
      }
    }
    if (!improved) break; // no downhill step at any damping: at a minimum to working precision
  }
  return { ok: true, reason: null, iterations: it, solves, initialCost, finalCost: cost };
}
