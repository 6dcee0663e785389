/**
 * Symmetric eigen-decomposition (cyclic Jacobi) and singular value decomposition (one-sided Jacobi) of small dense
 * row-major matrices. Jacobi methods are slower than QR-based ones but simple and accurate to high relative precision,
 * which suits the ≤ a-few-hundred-column problems here.
 * Method: Golub & Van Loan, "Matrix Computations", 4th ed., 2013, ch. 8 (cyclic Jacobi;
 * one-sided Jacobi SVD after M. R. Hestenes, J. SIAM 6(1), 1958).
 */
import { norm2 } from './dense-ops.ts';

export type EigenResult = { ok: true; sweeps: number } | { ok: false; reason: 'no-convergence' | 'not-finite' };

export type SvdResult =
  | {
      ok: true;
      /** Left singular vectors, m×k row-major (k = min(m, n)), orthonormal columns. */
      u: Float64Array;
      /** Singular values, length k, descending. */
      s: Float64Array;
      /** Right singular vectors, n×k row-major, orthonormal columns: A = U·diag(s)·Vᵀ. */
      v: Float64Array;
      sweeps: number;
    }
  | { ok: false; reason: 'no-convergence' | 'not-finite' };

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

/** Thin SVD A = U·diag(s)·Vᵀ of a(m×n) row-major (any shape); a is not modified. */
export function svd(a: Float64Array, m: number, n: number, maxSweeps = 60): SvdResult {
  if (a.length < m * n) throw new RangeError(`svd: a has ${a.length} elements, needs ${m}×${n}`);
  if (m >= n) return svdTall(a.slice(0, m * n), m, n, maxSweeps);
  const at = new Float64Array(m * n);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) at[j * m + i] = a[i * n + j]!;
  const r = svdTall(at, n, m, maxSweeps);
  return r.ok ? { ok: true, u: r.v, s: r.s, v: r.u, sweeps: r.sweeps } : r;
}

/** One-sided Jacobi on the columns of u (m×n, m ≥ n), overwritten with U·diag(s). */
function svdTall(u: Float64Array, m: number, n: number, maxSweeps: number): SvdResult {
  if (!Number.isFinite(norm2(u, m * n))) return { ok: false, reason: 'not-finite' };
  const v = new Float64Array(n * n);
  for (let i = 0; i < n; i++) v[i * n + i] = 1;
  for (let sweep = 1; sweep <= maxSweeps; sweep++) {
    let rotated = false;
    for (let p = 0; p < n - 1; p++) {
      for (let q = p + 1; q < n; q++) {
        let alpha = 0, beta = 0, gamma = 0;
        for (let i = 0; i < m; i++) {
          const up = u[i * n + p]!, uq = u[i * n + q]!;
          alpha += up * up;
          beta += uq * uq;
          gamma += up * uq;
        }
        // columns already orthogonal to working precision (Hestenes' convergence test)
        if (gamma === 0 || Math.abs(gamma) <= EPS * Math.sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t), s = c * t;
        for (let i = 0; i < m; i++) {
          const up = u[i * n + p]!, uq = u[i * n + q]!;
          u[i * n + p] = c * up - s * uq;
          u[i * n + q] = s * up + c * uq;
        }
        for (let i = 0; i < n; i++) {
          const vp = v[i * n + p]!, vq = v[i * n + q]!;
          v[i * n + p] = c * vp - s * vq;
          v[i * n + q] = s * vp + c * vq;
        }
      }
    }
    if (!rotated) return finishSvd(u, v, m, n, sweep);
  }
  return { ok: false, reason: 'no-convergence' };
}

/** Column norms → singular values, normalise U, complete U for zero singular values, sort descending. */
function finishSvd(u: Float64Array, v: Float64Array, m: number, n: number, sweeps: number): SvdResult {
  const s = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    let ss = 0;
    for (let i = 0; i < m; i++) ss += u[i * n + j]! * u[i * n + j]!;
    s[j] = Math.sqrt(ss);
  }
  const order = Array.from(s.keys()).sort((x, y) => s[y]! - s[x]!);
  const us = new Float64Array(m * n), vs = new Float64Array(n * n), ss = new Float64Array(n);
  const smax = s[order[0]!] ?? 0;
  for (let k = 0; k < n; k++) {
    const j = order[k]!;
    ss[k] = s[j]!;
    for (let i = 0; i < n; i++) vs[i * n + k] = v[i * n + j]!;
    if (s[j]! > EPS * smax * m && s[j]! > 0) {
      for (let i = 0; i < m; i++) us[i * n + k] = u[i * n + j]! / s[j]!;
    } else {
      completeColumn(us, m, n, k);
    }
  }
  return { ok: true, u: us, s: ss, v: vs, sweeps };
}

/** Fills column k of u with a unit vector orthogonal to columns 0..k−1 (Gram–Schmidt on the standard basis). */
function completeColumn(u: Float64Array, m: number, n: number, k: number): void {
  for (let e = 0; e < m; e++) {
    for (let i = 0; i < m; i++) u[i * n + k] = i === e ? 1 : 0;
    for (let pass = 0; pass < 2; pass++) {
      for (let j = 0; j < k; j++) {
        let d = 0;
        for (let i = 0; i < m; i++) d += u[i * n + j]! * u[i * n + k]!;
        for (let i = 0; i < m; i++) u[i * n + k]! -= d * u[i * n + j]!;
      }
    }
    let nn = 0;
    for (let i = 0; i < m; i++) nn += u[i * n + k]! * u[i * n + k]!;
    if (nn > 0.1) {
      const f = 1 / Math.sqrt(nn);
      for (let i = 0; i < m; i++) u[i * n + k]! *= f;
      return;
    }
  }
}
