/**
 * Linear least squares min‖A·x − b‖₂ by Householder QR, with a condition-number estimate.
 * Method: Golub & Van Loan, "Matrix Computations", 4th ed., 2013, ch. 5 (Householder QR solution
 * of the full-rank LS problem); condition estimate by Hager's 1-norm estimator (W. W. Hager,
 * "Condition estimates", SIAM J. Sci. Stat. Comput. 5(2), 1984; N. J. Higham, ACM TOMS 14(4), 1988).
 */

export type LeastSquaresResult =
  | {
      ok: true;
      /** Solution, length n. */
      x: Float64Array;
      /** b − A·x, length m. */
      residual: Float64Array;
      residualNorm: number;
      /**
       * Estimate of κ₁(R) = ‖R‖₁·‖R⁻¹‖₁ where A = QR; since κ₂(A) = κ₂(R), this is within a factor n of κ₂(A).
       * Values above ~1e8 mean the solution carries fewer than ~8 reliable digits.
       */
      conditionEstimate: number;
    }
  | { ok: false; reason: 'underdetermined' | 'rank-deficient' | 'not-finite'; index: number };

/** |R_kk| below this fraction of max |R_jj| is treated as rank deficiency (common practice, ~1e4·ε). */
const RANK_TOL = 1e-12;

/**
 * Solves min‖A·x − b‖₂ for a(m×n) row-major with m ≥ n and full column rank. Inputs are not modified; the
 * factorisation works on one m×n copy (allocated per call, none in the inner loops).
 */
export function leastSquares(a: Float64Array, b: Float64Array, m: number, n: number): LeastSquaresResult {
  if (a.length < m * n || b.length < m) throw new RangeError(`leastSquares: a needs ${m}×${n}, b needs ${m}`);
  if (m < n || n === 0) return { ok: false, reason: 'underdetermined', index: 0 };
  const qr = a.slice(0, m * n);
  const y = b.slice(0, m);
  const rdiag = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let s = 0;
    for (let i = k; i < m; i++) s += qr[i * n + k]! * qr[i * n + k]!;
    const xnorm = Math.sqrt(s);
    if (!Number.isFinite(xnorm)) return { ok: false, reason: 'not-finite', index: k };
    const x0 = qr[k * n + k]!;
    const alpha = x0 > 0 ? -xnorm : xnorm; // sign chosen to avoid cancellation in v0 = x0 − alpha
    rdiag[k] = alpha;
    if (xnorm === 0) continue;
    qr[k * n + k] = x0 - alpha; // v stored in column k, rows k..m−1
    const vtv = s - x0 * x0 + (x0 - alpha) * (x0 - alpha);
    for (let j = k + 1; j < n; j++) {
      let d = 0;
      for (let i = k; i < m; i++) d += qr[i * n + k]! * qr[i * n + j]!;
      const f = (2 * d) / vtv;
      for (let i = k; i < m; i++) qr[i * n + j]! -= f * qr[i * n + k]!;
    }
    let d = 0;
    for (let i = k; i < m; i++) d += qr[i * n + k]! * y[i]!;
    const f = (2 * d) / vtv;
    for (let i = k; i < m; i++) y[i]! -= f * qr[i * n + k]!;
  }
  let maxR = 0;
  for (let k = 0; k < n; k++) maxR = Math.max(maxR, Math.abs(rdiag[k]!));
  for (let k = 0; k < n; k++) {
    if (!(Math.abs(rdiag[k]!) > RANK_TOL * maxR)) return { ok: false, reason: 'rank-deficient', index: k };
  }
  for (let k = 0; k < n; k++) qr[k * n + k] = rdiag[k]!; // R now sits in the upper triangle of qr
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) x[k] = y[k]!;
  solveUpper(x, qr, n);
  const residual = new Float64Array(m);
  let rr = 0;
  for (let i = 0; i < m; i++) {
    let s = b[i]!;
    for (let j = 0; j < n; j++) s -= a[i * n + j]! * x[j]!;
    residual[i] = s;
    rr += s * s;
  }
  return { ok: true, x, residual, residualNorm: Math.sqrt(rr), conditionEstimate: conditionEstimate1(qr, n) };
}

/** In place: x ← R⁻¹x, R upper triangular in the leading n×n of r (row stride n). */
function solveUpper(x: Float64Array, r: Float64Array, n: number): void {
  for (let i = n - 1; i >= 0; i--) {
    let s = x[i]!;
    for (let k = i + 1; k < n; k++) s -= r[i * n + k]! * x[k]!;
    x[i] = s / r[i * n + i]!;
  }
}

/** In place: x ← R⁻ᵀx. */
function solveUpperTranspose(x: Float64Array, r: Float64Array, n: number): void {
  for (let i = 0; i < n; i++) {
    let s = x[i]!;
    for (let k = 0; k < i; k++) s -= r[k * n + i]! * x[k]!;
    x[i] = s / r[i * n + i]!;
  }
}

/** κ₁(R) with ‖R⁻¹‖₁ from Hager's estimator (at most 5 iterations, each two triangular solves, O(n²)). */
function conditionEstimate1(r: Float64Array, n: number): number {
  let norm1 = 0;
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i <= j; i++) s += Math.abs(r[i * n + j]!);
    norm1 = Math.max(norm1, s);
  }
  const x = new Float64Array(n).fill(1 / n);
  const z = new Float64Array(n);
  let est = 0;
  let lastJ = -1;
  for (let iter = 0; iter < 5; iter++) {
    solveUpper(x, r, n); // x now holds y = R⁻¹x
    est = 0;
    for (let i = 0; i < n; i++) est += Math.abs(x[i]!);
    for (let i = 0; i < n; i++) z[i] = x[i]! >= 0 ? 1 : -1;
    solveUpperTranspose(z, r, n);
    let j = 0;
    for (let i = 1; i < n; i++) if (Math.abs(z[i]!) > Math.abs(z[j]!)) j = i;
    if (j === lastJ) break;
    // Stop when the gradient ‖z‖∞ no longer exceeds zᵀx_old (Hager 1984, step 4); x_old was e_lastJ or uniform.
    const ztx = lastJ < 0 ? z.reduce((s, v) => s + v, 0) / n : z[lastJ]!;
    if (Math.abs(z[j]!) <= ztx) break;
    lastJ = j;
    x.fill(0);
    x[j] = 1;
  }
  return norm1 * est;
}
