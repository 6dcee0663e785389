/**
 * Adapters from the estimators' small normal equations to packages/geometry (dense: Cholesky, Jacobi eigen; robust:
 * median, MAD), in the value-returning shape the estimators use: a solve with its inverse (the covariance up to the
 * noise scale), eigenpairs, medians of the finite entries. No maths of its own.
 */
import { dense, robust } from '@plumbline/geometry';

/**
 * Solves the symmetric positive-definite system A x = b and returns x and A⁻¹, or null when A is not positive
 * definite (geometry's relative pivot floor). A and b are not modified.
 */
export function solveSpd(a: Float64Array, b: Float64Array, n: number): { x: Float64Array; inv: Float64Array } | null {
  const l = new Float64Array(n * n);
  if (!dense.choleskyFactor(l, a, n).ok) return null;
  const x = dense.choleskySolve(new Float64Array(n), l, b, n);
  return { x, inv: dense.choleskyInverse(new Float64Array(n * n), l, n) };
}

/**
 * Solves the symmetric positive-definite system A x = b into `x` with `l` (n×n) as scratch for the factor, without
 * the inverse; false when A is not positive definite (same test as `solveSpd`). For iterations that need only the step.
 */
export function solveSpdInto(x: Float64Array, l: Float64Array, a: Float64Array, b: Float64Array, n: number): boolean {
  if (!dense.choleskyFactor(l, a, n).ok) return false;
  dense.choleskySolve(x, l, b, n);
  return true;
}

/**
 * Eigen-decomposition of a symmetric n×n matrix (cyclic Jacobi): eigenvalues ascending and the matching unit
 * eigenvectors as columns of `vectors` (row-major n×n); NaN-filled when the sweeps did not converge.
 */
export function symmetricEigen(a: Float64Array, n: number): { values: Float64Array; vectors: Float64Array } {
  const values = new Float64Array(n), vectors = new Float64Array(n * n);
  if (!dense.symmetricEigen(values, vectors, a, n).ok) {
    values.fill(Number.NaN);
    vectors.fill(Number.NaN);
  }
  return { values, vectors };
}

/** Condition number (largest / smallest eigenvalue) of a symmetric positive semi-definite matrix; Infinity if singular. */
export function conditionNumber(a: Float64Array, n: number): number {
  const { values } = symmetricEigen(a, n);
  const lo = values[0]!;
  const hi = values[n - 1]!;
  return lo > 0 ? hi / lo : Number.POSITIVE_INFINITY;
}

/** x[0..n) with ±Infinity as NaN: geometry's robust statistics skip NaN, the estimators skip every non-finite entry. */
function finiteOnly(x: ArrayLike<number>, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = Number.isFinite(x[i]!) ? x[i]! : Number.NaN;
  return out;
}

/** Median of the finite entries of `x[0..n)` (NaN when none). */
export function medianOf(x: ArrayLike<number>, n = x.length): number {
  return robust.median(finiteOnly(x, n));
}

/** Normalised median absolute deviation (×1.4826, the normal-consistency factor) of the finite entries. */
export function madSigma(x: ArrayLike<number>, n = x.length): number {
  return robust.mad(finiteOnly(x, n)).sigma;
}
