/**
 * Small dense helpers private to the estimators (systems of at most a few dozen unknowns): symmetric solve and
 * inverse by Cholesky, symmetric eigen-decomposition by cyclic Jacobi rotations, medians.
 * Kept here rather than in geometry because they serve only the tiny normal equations of the estimators.
 * Method: Golub & Van Loan, "Matrix Computations", 4th ed., §4.2 (Cholesky) and §8.5 (Jacobi) — from memory.
 */

/** In-place Cholesky of a symmetric positive-definite n×n row-major matrix (lower factor). false when not SPD. */
export function cholesky(a: Float64Array, n: number): boolean {
  for (let j = 0; j < n; j++) {
    let d = a[j * n + j]!;
    for (let k = 0; k < j; k++) d -= a[j * n + k]! * a[j * n + k]!;
    if (!(d > 0)) return false;
    const l = Math.sqrt(d);
    a[j * n + j] = l;
    for (let i = j + 1; i < n; i++) {
      let s = a[i * n + j]!;
      for (let k = 0; k < j; k++) s -= a[i * n + k]! * a[j * n + k]!;
      a[i * n + j] = s / l;
    }
  }
  return true;
}

/** Solves L Lᵀ x = b in place in b, with L from `cholesky`. */
export function choleskySolve(l: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    let s = b[i]!;
    for (let k = 0; k < i; k++) s -= l[i * n + k]! * b[k]!;
    b[i] = s / l[i * n + i]!;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i]!;
    for (let k = i + 1; k < n; k++) s -= l[k * n + i]! * b[k]!;
    b[i] = s / l[i * n + i]!;
  }
  return b;
}

/**
 * Solves the symmetric positive-definite system A x = b and returns x and A⁻¹ (the covariance of a normal-equation
 * solution up to the noise scale), or null when A is not positive definite. A is not modified.
 */
export function solveSpd(a: Float64Array, b: Float64Array, n: number): { x: Float64Array; inv: Float64Array } | null {
  const l = a.slice();
  if (!cholesky(l, n)) return null;
  const x = choleskySolve(l, n, b.slice());
  const inv = new Float64Array(n * n);
  const col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    col.fill(0);
    col[j] = 1;
    choleskySolve(l, n, col);
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i]!;
  }
  return { x, inv };
}

/**
 * Eigen-decomposition of a symmetric n×n matrix by cyclic Jacobi rotations. Returns eigenvalues ascending and the
 * matching unit eigenvectors as columns of `vectors` (row-major n×n). A is not modified.
 */
export function symmetricEigen(a: Float64Array, n: number): { values: Float64Array; vectors: Float64Array } {
  const m = a.slice();
  const v = new Float64Array(n * n);
  for (let i = 0; i < n; i++) v[i * n + i] = 1;
  for (let sweep = 0; sweep < 60; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += m[p * n + q]! ** 2;
    if (off < 1e-30) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = m[p * n + q]!;
        if (Math.abs(apq) < 1e-300) continue;
        const theta = (m[q * n + q]! - m[p * n + p]!) / (2 * apq);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const mkp = m[k * n + p]!, mkq = m[k * n + q]!;
          m[k * n + p] = c * mkp - s * mkq;
          m[k * n + q] = s * mkp + c * mkq;
        }
        for (let k = 0; k < n; k++) {
          const mpk = m[p * n + k]!, mqk = m[q * n + k]!;
          m[p * n + k] = c * mpk - s * mqk;
          m[q * n + k] = s * mpk + c * mqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = v[k * n + p]!, vkq = v[k * n + q]!;
          v[k * n + p] = c * vkp - s * vkq;
          v[k * n + q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => m[i * n + i]! - m[j * n + j]!);
  const values = new Float64Array(n);
  const vectors = new Float64Array(n * n);
  order.forEach((src, dst) => {
    values[dst] = m[src * n + src]!;
    for (let k = 0; k < n; k++) vectors[k * n + dst] = v[k * n + src]!;
  });
  return { values, vectors };
}

/** Condition number (largest / smallest eigenvalue) of a symmetric positive semi-definite matrix; Infinity if singular. */
export function conditionNumber(a: Float64Array, n: number): number {
  const { values } = symmetricEigen(a, n);
  const lo = values[0]!;
  const hi = values[n - 1]!;
  return lo > 0 ? hi / lo : Number.POSITIVE_INFINITY;
}

/** Median of the finite entries of `x[0..n)` (copies; NaN when none). */
export function medianOf(x: ArrayLike<number>, n = x.length): number {
  const f: number[] = [];
  for (let i = 0; i < n; i++) if (Number.isFinite(x[i]!)) f.push(x[i]!);
  if (f.length === 0) return Number.NaN;
  f.sort((a, b) => a - b);
  const h = f.length >> 1;
  return f.length % 2 === 1 ? f[h]! : 0.5 * (f[h - 1]! + f[h]!);
}

/** Normalised median absolute deviation (×1.4826, the normal-consistency factor) of the finite entries. */
export function madSigma(x: ArrayLike<number>, n = x.length): number {
  const med = medianOf(x, n);
  const d: number[] = [];
  for (let i = 0; i < n; i++) if (Number.isFinite(x[i]!)) d.push(Math.abs(x[i]! - med));
  return 1.4826 * medianOf(d);
}
