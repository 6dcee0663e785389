/**
 * Thin singular value decomposition of small dense row-major matrices by one-sided Jacobi rotations
 * (M. R. Hestenes, J. SIAM 6(1), 1958; Golub & Van Loan, "Matrix Computations", 4th ed., 2013, ch. 8), accurate to
 * high relative precision. Tall matrices (m ≥ 2n) are first reduced by Householder QR so that the sweeps run on the
 * n×n factor R (Z. Drmač & K. Veselić, "New fast and accurate Jacobi SVD algorithm", SIAM J. Matrix Anal. Appl. 29,
 * 2008 — QR preconditioning), then U = Q·U_R.
 */
import { norm2 } from './dense-ops.ts';

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

/** Thin SVD A = U·diag(s)·Vᵀ of a(m×n) row-major (any shape); a is not modified. */
export function svd(a: Float64Array, m: number, n: number, maxSweeps = 60): SvdResult {
  if (a.length < m * n) throw new RangeError(`svd: a has ${a.length} elements, needs ${m}×${n}`);
  if (m < n) {
    const at = new Float64Array(m * n);
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) at[j * m + i] = a[i * n + j]!;
    const r = svd(at, n, m, maxSweeps);
    return r.ok ? { ok: true, u: r.v, s: r.s, v: r.u, sweeps: r.sweeps } : r;
  }
  if (n > 0 && m >= 2 * n) return svdViaQr(a, m, n, maxSweeps);
  return svdTall(a, m, n, maxSweeps);
}

/**
 * Householder QR of the tall a (m×n), Jacobi SVD of Rᵀ (rows of R as columns, the preconditioned variant of
 * Drmač & Veselić), then U = Q·U_R by applying the reflectors in reverse order. Row-oriented loops throughout.
 */
function svdViaQr(a: Float64Array, m: number, n: number, maxSweeps: number): SvdResult {
  if (!Number.isFinite(norm2(a, m * n))) return { ok: false, reason: 'not-finite' };
  const qr = a.slice(0, m * n);
  const beta = new Float64Array(n);
  const rt = new Float64Array(n * n); // Rᵀ, row-major
  const d = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let ss = 0;
    for (let i = k; i < m; i++) ss += qr[i * n + k]! * qr[i * n + k]!;
    const xnorm = Math.sqrt(ss);
    const x0 = qr[k * n + k]!;
    const alpha = x0 > 0 ? -xnorm : xnorm;
    rt[k * n + k] = alpha;
    if (xnorm === 0) continue;
    qr[k * n + k] = x0 - alpha; // v in column k, rows k..m−1
    beta[k] = 2 / (ss - x0 * x0 + (x0 - alpha) * (x0 - alpha));
    applyReflector(qr, n, m, k, k + 1, n, qr, n, beta[k]!, d);
    for (let j = k + 1; j < n; j++) rt[j * n + k] = qr[k * n + j]!;
  }
  const inner = svdTall(rt, n, n, maxSweeps);
  if (!inner.ok) return inner;
  // Rᵀ = U'·S·V'ᵀ ⇒ R = V'·S·U'ᵀ: U_R = V' (n×n), V = U'
  const u = new Float64Array(m * n);
  u.set(inner.v.subarray(0, n * n));
  for (let k = n - 1; k >= 0; k--) if (beta[k]! !== 0) applyReflector(u, n, m, k, 0, n, qr, n, beta[k]!, d);
  return { ok: true, u, s: inner.s, v: inner.u, sweeps: inner.sweeps };
}

/**
 * x ← (I − β·v·vᵀ)·x on rows k..m−1 and columns c0..c1−1 of x (row stride xs), with v = column k, rows k..m−1, of
 * `house` (row stride hs). `d` is scratch of length ≥ c1.
 */
function applyReflector(
  x: Float64Array, xs: number, m: number, k: number, c0: number, c1: number,
  house: Float64Array, hs: number, b: number, d: Float64Array,
): void {
  d.fill(0, c0, c1);
  for (let i = k; i < m; i++) {
    const vi = house[i * hs + k]!;
    if (vi === 0) continue;
    for (let c = c0; c < c1; c++) d[c]! += vi * x[i * xs + c]!;
  }
  for (let i = k; i < m; i++) {
    const f = b * house[i * hs + k]!;
    if (f === 0) continue;
    for (let c = c0; c < c1; c++) x[i * xs + c]! -= f * d[c]!;
  }
}

/**
 * One-sided Jacobi on the columns of a (m×n, m ≥ n). Works on transposed copies (row j of `w` is column j of A,
 * row j of `vt` is column j of V) so every inner loop runs over contiguous memory; squared column norms are updated
 * with the rotation (α′ = α − tγ, β′ = β + tγ) and recomputed each sweep, so a pair costs one dot product.
 */
function svdTall(a: Float64Array, m: number, n: number, maxSweeps: number): SvdResult {
  const normF = norm2(a, m * n);
  if (!Number.isFinite(normF)) return { ok: false, reason: 'not-finite' };
  const w = new Float64Array(n * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) w[j * m + i] = a[i * n + j]!;
  const vt = new Float64Array(n * n);
  for (let i = 0; i < n; i++) vt[i * n + i] = 1;
  const sq = new Float64Array(n);
  // columns below this squared norm are numerically zero: rotating them only churns rounding noise
  const negligible = (EPS * normF) ** 2;
  for (let sweep = 1; sweep <= maxSweeps; sweep++) {
    for (let j = 0; j < n; j++) {
      let ss = 0;
      for (let i = j * m, e = i + m; i < e; i++) ss += w[i]! * w[i]!;
      sq[j] = ss;
    }
    let rotated = false;
    for (let p = 0; p < n - 1; p++) {
      const po = p * m;
      for (let q = p + 1; q < n; q++) {
        const alpha = sq[p]!, beta = sq[q]!;
        if (alpha <= negligible || beta <= negligible) continue;
        const qo = q * m;
        let gamma = 0;
        for (let i = 0; i < m; i++) gamma += w[po + i]! * w[qo + i]!;
        // columns already orthogonal to working precision (Hestenes' convergence test)
        if (Math.abs(gamma) <= EPS * Math.sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t), s = c * t;
        for (let i = 0; i < m; i++) {
          const up = w[po + i]!, uq = w[qo + i]!;
          w[po + i] = c * up - s * uq;
          w[qo + i] = s * up + c * uq;
        }
        const pv = p * n, qv = q * n;
        for (let i = 0; i < n; i++) {
          const vp = vt[pv + i]!, vq = vt[qv + i]!;
          vt[pv + i] = c * vp - s * vq;
          vt[qv + i] = s * vp + c * vq;
        }
        sq[p] = alpha - t * gamma;
        sq[q] = beta + t * gamma;
      }
    }
    if (!rotated) return finishSvd(w, vt, m, n, sweep, normF);
  }
  return { ok: false, reason: 'no-convergence' };
}

/**
 * Column norms → singular values, sort descending, normalise U. Columns at the ε·‖A‖_F level were skipped by the
 * sweeps (so not orthogonalised); their U columns are completed to an orthonormal set instead.
 */
function finishSvd(w: Float64Array, vt: Float64Array, m: number, n: number, sweeps: number, normF: number): SvdResult {
  const s = new Float64Array(n);
  for (let j = 0; j < n; j++) s[j] = norm2(w.subarray(j * m, j * m + m), m);
  const order = Array.from(s.keys()).sort((x, y) => s[y]! - s[x]!);
  const us = new Float64Array(m * n), vs = new Float64Array(n * n), ss = new Float64Array(n);
  const zero = 2 * EPS * normF;
  for (let k = 0; k < n; k++) {
    const j = order[k]!;
    ss[k] = s[j]!;
    for (let i = 0; i < n; i++) vs[i * n + k] = vt[j * n + i]!;
    if (s[j]! > zero) {
      for (let i = 0; i < m; i++) us[i * n + k] = w[j * m + i]! / s[j]!;
    } else {
      completeColumn(us, m, n, k);
    }
  }
  return { ok: true, u: us, s: ss, v: vs, sweeps };
}

/**
 * Fills column k of u with a unit vector orthogonal to columns 0..k−1: Gram–Schmidt (two passes) on the standard
 * basis vector eᵢ whose row of U has the smallest norm. Since the squared row norms sum to k, that row has norm² ≤
 * k/m < 1, so the projected vector keeps norm² ≥ 1 − k/m and one candidate always suffices. O(m·k).
 */
function completeColumn(u: Float64Array, m: number, n: number, k: number): void {
  let e = 0;
  let best = Infinity;
  for (let i = 0; i < m; i++) {
    let r = 0;
    for (let j = 0; j < k; j++) r += u[i * n + j]! * u[i * n + j]!;
    if (r < best) {
      best = r;
      e = i;
    }
  }
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
  const f = 1 / Math.sqrt(nn);
  for (let i = 0; i < m; i++) u[i * n + k]! *= f;
}
