import { minimumDegreeSymbolic, type SymbolicCholesky } from './sparse-ordering.ts';

/**
 * Block-sparse Cholesky factorisation A = P^T L L^T P of a symmetric positive-definite matrix made of b×b blocks,
 * as it arises in least squares over graphs (pose graphs: one block per node, one off-diagonal block per edge).
 *
 * Storage: block compressed sparse columns (block CSC) of the lower factor, dense b×b row-major blocks.
 * Method: minimum-degree ordering and symbolic factorisation once (`sparse-ordering.ts`), then a left-looking
 * numeric factorisation with per-column linked lists of pending updates (George & Liu, "Computer Solution of Large
 * Sparse Positive Definite Systems", 1981, ch. 5; T. Davis, "Direct Methods for Sparse Linear Systems", SIAM 2006,
 * ch. 4). Numeric factorisation can be repeated with new values on the same pattern (Levenberg–Marquardt).
 * No dense n×n matrix is ever formed.
 */
export interface BlockCholesky {
  readonly n: number;
  readonly b: number;
  readonly symbolic: SymbolicCholesky;
  /** Number of b×b blocks stored below the diagonal of L (fill included). */
  readonly factorBlocks: number;
  /**
   * Factorises the matrix whose diagonal blocks are `diag` (n·b² values, block i at i·b², row-major) and whose
   * off-diagonal blocks are `off` (m·b² values: block e is A[pairs[2e], pairs[2e+1]], row-major; the symmetric
   * block is implied; repeated pairs add up). `diagShift[i·b + r]` (optional) is added to the diagonal.
   */
  factorize(diag: Float64Array, off: Float64Array, diagShift?: Float64Array | null): { ok: true } | { ok: false; reason: string };
  /** Solves A x = rhs with the last successful factorisation (n·b values); `out` may alias `rhs`. */
  solve(out: Float64Array, rhs: Float64Array): Float64Array;
}

/**
 * Prepares the ordering, symbolic factor and assembly map for a block pattern given as node pairs. `symbolic` (from
 * `minimumDegreeSymbolic(n, pairs)` or another factor of the same pattern) skips the ordering: it depends on the
 * pattern alone, not on the block size, so systems of several block sizes over one graph share it.
 */
export function createBlockCholesky(n: number, b: number, pairs: Int32Array, symbolic?: SymbolicCholesky): BlockCholesky {
  const sym = symbolic ?? minimumDegreeSymbolic(n, pairs);
  if (sym.n !== n) throw new RangeError(`symbolic factor is for ${sym.n} nodes, not ${n}`);
  const { perm, iperm, colStart, rowIdx } = sym;
  const bb = b * b;
  const m = pairs.length / 2;
  // Assembly map: slot of each input pair in the factor storage, and whether it lands transposed.
  const slot = new Int32Array(m);
  const transposed = new Uint8Array(m);
  for (let e = 0; e < m; e++) {
    const pa = iperm[pairs[2 * e]!]!, pb = iperm[pairs[2 * e + 1]!]!;
    if (pa === pb) throw new RangeError(`pair ${e} joins node ${pairs[2 * e]} to itself; put it in the diagonal`);
    const row = pa > pb ? pa : pb, col = pa > pb ? pb : pa;
    transposed[e] = pa > pb ? 0 : 1;
    let lo = colStart[col]!, hi = colStart[col + 1]! - 1;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (rowIdx[mid]! < row) lo = mid + 1;
      else hi = mid;
    }
    slot[e] = lo;
  }
  const nnz = colStart[n]!;
  const lval = new Float64Array(nnz * bb);
  const ldiag = new Float64Array(n * bb);
  const head = new Int32Array(n);
  const next = new Int32Array(n);
  const ptr = new Int32Array(n);
  const posOf = new Int32Array(n);
  const work = new Float64Array(n * b);

  function link(k: number, row: number): void {
    next[k] = head[row]!;
    head[row] = k;
  }

  function factorize(diag: Float64Array, off: Float64Array, diagShift?: Float64Array | null) {
    if (diag.length !== n * bb || off.length !== m * bb) throw new RangeError('diag/off length does not match the pattern');
    lval.fill(0);
    for (let e = 0; e < m; e++) {
      const dst = slot[e]! * bb, src = e * bb;
      if (transposed[e]) {
        for (let r = 0; r < b; r++) for (let c = 0; c < b; c++) lval[dst + r * b + c]! += off[src + c * b + r]!;
      } else {
        for (let i = 0; i < bb; i++) lval[dst + i]! += off[src + i]!;
      }
    }
    for (let k = 0; k < n; k++) {
      const src = perm[k]! * bb, dst = k * bb;
      for (let i = 0; i < bb; i++) ldiag[dst + i] = diag[src + i]!;
      if (diagShift) for (let r = 0; r < b; r++) ldiag[dst + r * b + r]! += diagShift[perm[k]! * b + r]!;
    }
    head.fill(-1);
    for (let j = 0; j < n; j++) {
      const c0 = colStart[j]!, c1 = colStart[j + 1]!;
      for (let s = c0; s < c1; s++) posOf[rowIdx[s]!] = s;
      let k = head[j]!;
      while (k !== -1) {
        const nextK = next[k]!;
        const p = ptr[k]!, end = colStart[k + 1]!;
        const ljk = p * bb;
        subOuter(ldiag, j * bb, lval, ljk, lval, ljk, b);
        for (let q = p + 1; q < end; q++) subOuter(lval, posOf[rowIdx[q]!]! * bb, lval, q * bb, lval, ljk, b);
        if (p + 1 < end) {
          ptr[k] = p + 1;
          link(k, rowIdx[p + 1]!);
        }
        k = nextK;
      }
      if (!denseCholesky(ldiag, j * bb, b)) return { ok: false as const, reason: `matrix not positive definite at node ${perm[j]}` };
      for (let s = c0; s < c1; s++) solveRowsLowerT(lval, s * bb, ldiag, j * bb, b);
      if (c1 > c0) {
        ptr[j] = c0;
        link(j, rowIdx[c0]!);
      }
    }
    return { ok: true as const };
  }

  function solve(out: Float64Array, rhs: Float64Array): Float64Array {
    if (rhs.length !== n * b || out.length !== n * b) throw new RangeError('rhs/out length must be n·b');
    const y = work;
    for (let k = 0; k < n; k++) for (let r = 0; r < b; r++) y[k * b + r] = rhs[perm[k]! * b + r]!;
    for (let k = 0; k < n; k++) {
      forwardBlock(y, k * b, ldiag, k * bb, b);
      for (let s = colStart[k]!; s < colStart[k + 1]!; s++) {
        const i = rowIdx[s]! * b, L = s * bb;
        for (let r = 0; r < b; r++) {
          let acc = 0;
          for (let c = 0; c < b; c++) acc += lval[L + r * b + c]! * y[k * b + c]!;
          y[i + r]! -= acc;
        }
      }
    }
    for (let k = n - 1; k >= 0; k--) {
      for (let s = colStart[k]!; s < colStart[k + 1]!; s++) {
        const i = rowIdx[s]! * b, L = s * bb;
        for (let c = 0; c < b; c++) {
          let acc = 0;
          for (let r = 0; r < b; r++) acc += lval[L + r * b + c]! * y[i + r]!;
          y[k * b + c]! -= acc;
        }
      }
      backwardBlock(y, k * b, ldiag, k * bb, b);
    }
    for (let k = 0; k < n; k++) for (let r = 0; r < b; r++) out[perm[k]! * b + r] = y[k * b + r]!;
    return out;
  }

  return { n, b, symbolic: sym, factorBlocks: nnz, factorize, solve };
}

/** C -= A · B^T for b×b row-major blocks at the given offsets. */
function subOuter(C: Float64Array, c: number, A: Float64Array, a: number, B: Float64Array, bo: number, b: number): void {
  if (b === 6) return subOuter6(C, c, A, a, B, bo);
  if (b === 3) return subOuter3(C, c, A, a, B, bo);
  for (let r = 0; r < b; r++) {
    for (let col = 0; col < b; col++) {
      let acc = 0;
      for (let t = 0; t < b; t++) acc += A[a + r * b + t]! * B[bo + col * b + t]!;
      C[c + r * b + col]! -= acc;
    }
  }
}

/** subOuter for 6×6 blocks (SE(3) graphs) with the inner product unrolled: the hot kernel of the factorisation. */
function subOuter6(C: Float64Array, c: number, A: Float64Array, a: number, B: Float64Array, bo: number): void {
  for (let r = 0; r < 6; r++) {
    const ar = a + r * 6;
    const a0 = A[ar]!, a1 = A[ar + 1]!, a2 = A[ar + 2]!, a3 = A[ar + 3]!, a4 = A[ar + 4]!, a5 = A[ar + 5]!;
    const cr = c + r * 6;
    for (let col = 0; col < 6; col++) {
      const bc = bo + col * 6;
      C[cr + col]! -= a0 * B[bc]! + a1 * B[bc + 1]! + a2 * B[bc + 2]! + a3 * B[bc + 3]! + a4 * B[bc + 4]! + a5 * B[bc + 5]!;
    }
  }
}

/** subOuter for 3×3 blocks (planar graphs). */
function subOuter3(C: Float64Array, c: number, A: Float64Array, a: number, B: Float64Array, bo: number): void {
  for (let r = 0; r < 3; r++) {
    const ar = a + r * 3;
    const a0 = A[ar]!, a1 = A[ar + 1]!, a2 = A[ar + 2]!;
    const cr = c + r * 3;
    C[cr]! -= a0 * B[bo]! + a1 * B[bo + 1]! + a2 * B[bo + 2]!;
    C[cr + 1]! -= a0 * B[bo + 3]! + a1 * B[bo + 4]! + a2 * B[bo + 5]!;
    C[cr + 2]! -= a0 * B[bo + 6]! + a1 * B[bo + 7]! + a2 * B[bo + 8]!;
  }
}

/** In-place dense Cholesky of a b×b block (lower triangle written, upper zeroed); false when not positive definite. */
function denseCholesky(M: Float64Array, o: number, b: number): boolean {
  for (let j = 0; j < b; j++) {
    let d = M[o + j * b + j]!;
    for (let t = 0; t < j; t++) d -= M[o + j * b + t]! ** 2;
    if (!(d > 0)) return false;
    const ljj = Math.sqrt(d);
    M[o + j * b + j] = ljj;
    for (let i = j + 1; i < b; i++) {
      let s = M[o + i * b + j]!;
      for (let t = 0; t < j; t++) s -= M[o + i * b + t]! * M[o + j * b + t]!;
      M[o + i * b + j] = s / ljj;
    }
    for (let i = 0; i < j; i++) M[o + i * b + j] = 0;
  }
  return true;
}

/** X ← X · L^{-T} for a b×b block X (each row solved by forward substitution with lower L). */
function solveRowsLowerT(X: Float64Array, x: number, L: Float64Array, l: number, b: number): void {
  for (let r = 0; r < b; r++) {
    for (let c = 0; c < b; c++) {
      let s = X[x + r * b + c]!;
      for (let t = 0; t < c; t++) s -= X[x + r * b + t]! * L[l + c * b + t]!;
      X[x + r * b + c] = s / L[l + c * b + c]!;
    }
  }
}

function forwardBlock(y: Float64Array, o: number, L: Float64Array, l: number, b: number): void {
  for (let r = 0; r < b; r++) {
    let s = y[o + r]!;
    for (let t = 0; t < r; t++) s -= L[l + r * b + t]! * y[o + t]!;
    y[o + r] = s / L[l + r * b + r]!;
  }
}

function backwardBlock(y: Float64Array, o: number, L: Float64Array, l: number, b: number): void {
  for (let r = b - 1; r >= 0; r--) {
    let s = y[o + r]!;
    for (let t = r + 1; t < b; t++) s -= L[l + t * b + r]! * y[o + t]!;
    y[o + r] = s / L[l + r * b + r]!;
  }
}
