/**
 * Cholesky (A = L·Lᵀ) and LU with partial pivoting (P·A = L·U) for small dense square matrices, row-major.
 * Method: G. H. Golub & C. F. Van Loan, "Matrix Computations", 4th ed., 2013, chs. 3–4 (Gaussian elimination with
 * partial pivoting; gaxpy Cholesky), from memory. Failures are values, never exceptions.
 */

export type FactorResult =
  | { ok: true }
  | { ok: false; reason: 'not-positive-definite' | 'singular' | 'not-finite'; index: number };

/**
 * Relative pivot floor: a pivot below 1e-14 × (largest diagonal of A) is treated as zero, because at that level the
 * factor is dominated by rounding and solves would amplify noise by more than 1e14 (common practice).
 */
const PIVOT_FLOOR = 1e-14;

/**
 * Cholesky factor of a symmetric positive-definite a(n×n): writes lower-triangular L into l (upper part zeroed);
 * l may alias a. Only the lower triangle of a is read.
 */
export function choleskyFactor(l: Float64Array, a: Float64Array, n: number): FactorResult {
  if (a.length < n * n || l.length < n * n) throw new RangeError(`choleskyFactor: arrays shorter than ${n}×${n}`);
  let maxDiag = 0;
  for (let i = 0; i < n; i++) maxDiag = Math.max(maxDiag, Math.abs(a[i * n + i]!));
  const floor = PIVOT_FLOOR * maxDiag;
  for (let j = 0; j < n; j++) {
    const rj = j * n;
    let d = a[rj + j]!;
    for (let k = 0; k < j; k++) d -= l[rj + k]! * l[rj + k]!;
    if (!Number.isFinite(d)) return { ok: false, reason: 'not-finite', index: j };
    if (d <= floor) return { ok: false, reason: 'not-positive-definite', index: j };
    const ljj = Math.sqrt(d);
    l[rj + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      const ri = i * n;
      let s = a[ri + j]!;
      for (let k = 0; k < j; k++) s -= l[ri + k]! * l[rj + k]!;
      l[ri + j] = s / ljj;
    }
  }
  for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) l[i * n + j] = 0;
  return { ok: true };
}

/** Solves L·Lᵀ·x = b with a factor from choleskyFactor; out may alias b. */
export function choleskySolve(out: Float64Array, l: Float64Array, b: Float64Array, n: number): Float64Array {
  if (out !== b) for (let i = 0; i < n; i++) out[i] = b[i]!;
  for (let i = 0; i < n; i++) {
    let s = out[i]!;
    for (let k = 0; k < i; k++) s -= l[i * n + k]! * out[k]!;
    out[i] = s / l[i * n + i]!;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = out[i]!;
    for (let k = i + 1; k < n; k++) s -= l[k * n + i]! * out[k]!;
    out[i] = s / l[i * n + i]!;
  }
  return out;
}

/** out = A⁻¹ from the Cholesky factor of A (e.g. a covariance from an information matrix); out must not alias l. */
export function choleskyInverse(out: Float64Array, l: Float64Array, n: number): Float64Array {
  const col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    col.fill(0);
    col[j] = 1;
    choleskySolve(col, l, col, n);
    for (let i = 0; i < n; i++) out[i * n + j] = col[i]!;
  }
  return out;
}

/**
 * LU factorisation with partial pivoting of a(n×n): writes unit-lower L (below the diagonal) and U into lu (may alias
 * a) and the row pivots into piv (piv[k] = row swapped with k at step k).
 */
export function luFactor(lu: Float64Array, piv: Int32Array, a: Float64Array, n: number): FactorResult {
  if (a.length < n * n || lu.length < n * n || piv.length < n) throw new RangeError(`luFactor: arrays shorter than ${n}`);
  if (lu !== a) for (let i = 0; i < n * n; i++) lu[i] = a[i]!;
  let maxAbs = 0;
  for (let i = 0; i < n * n; i++) maxAbs = Math.max(maxAbs, Math.abs(lu[i]!));
  if (!Number.isFinite(maxAbs)) return { ok: false, reason: 'not-finite', index: 0 };
  const floor = PIVOT_FLOOR * maxAbs;
  for (let k = 0; k < n; k++) {
    let p = k;
    let best = Math.abs(lu[k * n + k]!);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(lu[i * n + k]!);
      if (v > best) {
        best = v;
        p = i;
      }
    }
    piv[k] = p;
    if (!(best > floor)) return { ok: false, reason: 'singular', index: k };
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        const tmp = lu[k * n + j]!;
        lu[k * n + j] = lu[p * n + j]!;
        lu[p * n + j] = tmp;
      }
    }
    const ukk = lu[k * n + k]!;
    for (let i = k + 1; i < n; i++) {
      const lik = lu[i * n + k]! / ukk;
      lu[i * n + k] = lik;
      if (lik === 0) continue;
      for (let j = k + 1; j < n; j++) lu[i * n + j]! -= lik * lu[k * n + j]!;
    }
  }
  return { ok: true };
}

/** Solves A·x = b from luFactor output; out may alias b. */
export function luSolve(out: Float64Array, lu: Float64Array, piv: Int32Array, b: Float64Array, n: number): Float64Array {
  if (out !== b) for (let i = 0; i < n; i++) out[i] = b[i]!;
  for (let k = 0; k < n; k++) {
    const p = piv[k]!;
    if (p !== k) {
      const tmp = out[k]!;
      out[k] = out[p]!;
      out[p] = tmp;
    }
  }
  for (let i = 0; i < n; i++) {
    let s = out[i]!;
    for (let k = 0; k < i; k++) s -= lu[i * n + k]! * out[k]!;
    out[i] = s;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = out[i]!;
    for (let k = i + 1; k < n; k++) s -= lu[i * n + k]! * out[k]!;
    out[i] = s / lu[i * n + i]!;
  }
  return out;
}

/** Determinant from luFactor output: product of U's diagonal with the sign of the row permutation. */
export function luDeterminant(lu: Float64Array, piv: Int32Array, n: number): number {
  let det = 1;
  for (let k = 0; k < n; k++) {
    det *= lu[k * n + k]!;
    if (piv[k] !== k) det = -det;
  }
  return det;
}
