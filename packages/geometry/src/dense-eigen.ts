/**
 * Symmetric eigen-decomposition of small dense row-major matrices by cyclic Jacobi rotations: slower than QR-based
 * methods but simple and accurate to high relative precision, which suits the ≤ a-few-hundred-column problems here.
 * Method: Golub & Van Loan, "Matrix Computations", 4th ed., 2013, ch. 8 (cyclic Jacobi).
 */
import { norm2 } from './dense-ops.ts';

export type EigenResult = { ok: true; sweeps: number } | { ok: false; reason: 'no-convergence' | 'not-finite' };

const EPS = 2.220446049250313e-16;

/**
 * Eigenvalues (ascending, into `values`, length n) and eigenvectors (columns of `vectors`, n×n row-major) of a
 * symmetric a(n×n); only a's upper triangle is read and a is not modified. A·V = V·diag(values).
 */
export function symmetricEigen(values: Float64Array, vectors: Float64Array, a: Float64Array, n: number, maxSweeps = 60): EigenResult {
  if (a.length < n * n || vectors.length < n * n || values.length < n) throw new RangeError(`symmetricEigen: arrays shorter than ${n}`);
  const w = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = i; j < n; j++) w[i * n + j] = w[j * n + i] = a[i * n + j]!;
  if (!Number.isFinite(norm2(w, n * n))) return { ok: false, reason: 'not-finite' };
  vectors.fill(0, 0, n * n);
  for (let i = 0; i < n; i++) vectors[i * n + i] = 1;
  const tol = EPS * norm2(w, n * n);
  for (let sweep = 1; sweep <= maxSweeps; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += w[p * n + q]! * w[p * n + q]!;
    if (Math.sqrt(2 * off) <= tol) return finishEigen(values, vectors, w, n, sweep - 1);
    for (let p = 0; p < n - 1; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = w[p * n + q]!;
        if (apq === 0) continue;
        const app = w[p * n + p]!, aqq = w[q * n + q]!;
        const tau = (aqq - app) / (2 * apq);
        const t = (tau >= 0 ? 1 : -1) / (Math.abs(tau) + Math.sqrt(1 + tau * tau));
        const c = 1 / Math.sqrt(1 + t * t), s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = w[k * n + p]!, akq = w[k * n + q]!;
          w[k * n + p] = c * akp - s * akq;
          w[k * n + q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = w[p * n + k]!, aqk = w[q * n + k]!;
          w[p * n + k] = c * apk - s * aqk;
          w[q * n + k] = s * apk + c * aqk;
        }
        w[p * n + q] = w[q * n + p] = 0;
        for (let k = 0; k < n; k++) {
          const vkp = vectors[k * n + p]!, vkq = vectors[k * n + q]!;
          vectors[k * n + p] = c * vkp - s * vkq;
          vectors[k * n + q] = s * vkp + c * vkq;
        }
      }
    }
  }
  return { ok: false, reason: 'no-convergence' };
}

/** Sorts eigenpairs ascending (selection sort on columns: n is small and swaps are O(n)). */
function finishEigen(values: Float64Array, vectors: Float64Array, w: Float64Array, n: number, sweeps: number): EigenResult {
  for (let i = 0; i < n; i++) values[i] = w[i * n + i]!;
  for (let i = 0; i < n; i++) {
    let k = i;
    for (let j = i + 1; j < n; j++) if (values[j]! < values[k]!) k = j;
    if (k === i) continue;
    const tv = values[i]!;
    values[i] = values[k]!;
    values[k] = tv;
    for (let r = 0; r < n; r++) {
      const t = vectors[r * n + i]!;
      vectors[r * n + i] = vectors[r * n + k]!;
      vectors[r * n + k] = t;
    }
  }
  return { ok: true, sweeps };
}
