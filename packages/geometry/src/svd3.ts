/**
 * Singular value decomposition of a 3×3 matrix without allocation: A = U·diag(s)·Vᵀ, s descending and ≥ 0,
 * U and V orthogonal (each may have determinant −1). Method: one-sided Jacobi (M. R. Hestenes, J. SIAM 6(1), 1958;
 * Golub & Van Loan, "Matrix Computations", 4th ed., ch. 8) on the three columns, which is accurate for small
 * singular values too; rank-deficient U is completed with cross products.
 */
import type { Mat3 } from './mat3.ts';
import type { Vec3 } from './vec3.ts';

const EPS = 2.220446049250313e-16;
const w = new Float64Array(9);
const vw = new Float64Array(9);
const norms = new Float64Array(3);
const order = new Int32Array(3);
const tmpU = new Float64Array(9);
const tmpV = new Float64Array(9);

function rotateColumns(m: Float64Array, p: number, q: number, c: number, s: number): void {
  for (let i = 0; i < 3; i++) {
    const a = m[i * 3 + p]!, b = m[i * 3 + q]!;
    m[i * 3 + p] = c * a - s * b;
    m[i * 3 + q] = s * a + c * b;
  }
}

/** One Jacobi step on columns p, q of w; returns false when they are already orthogonal. */
function jacobiPair(p: number, q: number): boolean {
  let alpha = 0, beta = 0, gamma = 0;
  for (let i = 0; i < 3; i++) {
    const a = w[i * 3 + p]!, b = w[i * 3 + q]!;
    alpha += a * a;
    beta += b * b;
    gamma += a * b;
  }
  if (gamma === 0 || Math.abs(gamma) <= EPS * Math.sqrt(alpha * beta)) return false;
  const zeta = (beta - alpha) / (2 * gamma);
  const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
  const c = 1 / Math.sqrt(1 + t * t);
  rotateColumns(w, p, q, c, c * t);
  rotateColumns(vw, p, q, c, c * t);
  return true;
}

/** Sets column k of u (row-major 3×3) to the cross product of columns i and j. */
function crossColumns(u: Mat3, k: number, i: number, j: number): void {
  const ax = u[i]!, ay = u[3 + i]!, az = u[6 + i]!, bx = u[j]!, by = u[3 + j]!, bz = u[6 + j]!;
  u[k] = ay * bz - az * by;
  u[3 + k] = az * bx - ax * bz;
  u[6 + k] = ax * by - ay * bx;
}

/** Writes a unit vector orthogonal to column 0 of u into column 1. */
function orthogonalColumn(u: Mat3): void {
  const x = u[0]!, y = u[3]!, z = u[6]!;
  // cross with the basis axis least aligned with column 0
  const ax = Math.abs(x), ay = Math.abs(y), az = Math.abs(z);
  let cx: number, cy: number, cz: number;
  if (ax <= ay && ax <= az) [cx, cy, cz] = [0, -z, y];
  else if (ay <= az) [cx, cy, cz] = [z, 0, -x];
  else [cx, cy, cz] = [-y, x, 0];
  const n = Math.hypot(cx, cy, cz);
  u[1] = cx / n;
  u[4] = cy / n;
  u[7] = cz / n;
}

/**
 * 3×3 SVD: writes U, V (row-major) and s (descending). Returns false only for non-finite input or (never observed)
 * failure to converge within 30 sweeps; outputs are then unspecified.
 */
export function svd3(u: Mat3, s: Vec3, v: Mat3, a: Mat3): boolean {
  for (let i = 0; i < 9; i++) {
    if (!Number.isFinite(a[i]!)) return false;
    w[i] = a[i]!;
    vw[i] = i % 4 === 0 ? 1 : 0;
  }
  let converged = false;
  for (let sweep = 0; sweep < 30 && !converged; sweep++) {
    const r01 = jacobiPair(0, 1), r02 = jacobiPair(0, 2), r12 = jacobiPair(1, 2);
    converged = !(r01 || r02 || r12);
  }
  if (!converged) return false;
  for (let j = 0; j < 3; j++) norms[j] = Math.hypot(w[j]!, w[3 + j]!, w[6 + j]!);
  order[0] = 0;
  order[1] = 1;
  order[2] = 2;
  for (let i = 0; i < 2; i++) {
    for (let j = i + 1; j < 3; j++) {
      if (norms[order[j]!]! > norms[order[i]!]!) {
        const t = order[i]!;
        order[i] = order[j]!;
        order[j] = t;
      }
    }
  }
  const smax = norms[order[0]!]!;
  const floor = 8 * EPS * smax;
  for (let k = 0; k < 3; k++) {
    const j = order[k]!;
    const nj = norms[j]!;
    s[k] = nj;
    for (let i = 0; i < 3; i++) {
      tmpV[i * 3 + k] = vw[i * 3 + j]!;
      tmpU[i * 3 + k] = nj > floor && nj > 0 ? w[i * 3 + j]! / nj : 0;
    }
  }
  // Complete U where singular values vanish: keeps U orthogonal for rank-2, rank-1 and zero matrices.
  if (!(s[0]! > floor && s[0]! > 0)) {
    tmpU.fill(0);
    tmpU[0] = tmpU[4] = tmpU[8] = 1;
  } else if (!(s[1]! > floor)) {
    orthogonalColumn(tmpU);
    crossColumns(tmpU, 2, 0, 1);
  } else if (!(s[2]! > floor)) {
    crossColumns(tmpU, 2, 0, 1);
  }
  u.set(tmpU);
  v.set(tmpV);
  return true;
}

const su = new Float64Array(9);
const sv = new Float64Array(9);
const ss = new Float64Array(3);

/**
 * Closest rotation (Frobenius norm) to a 3×3 matrix: R = U·diag(1, 1, det(U·Vᵀ))·Vᵀ
 * (W. Kabsch, Acta Cryst. A32, 1976; the same sign correction as Umeyama 1991). Returns false on non-finite input.
 */
export function nearestRotation(out: Mat3, a: Mat3): boolean {
  if (!svd3(su, ss, sv, a)) return false;
  const detU = su[0]! * (su[4]! * su[8]! - su[5]! * su[7]!) - su[1]! * (su[3]! * su[8]! - su[5]! * su[6]!) + su[2]! * (su[3]! * su[7]! - su[4]! * su[6]!);
  const detV = sv[0]! * (sv[4]! * sv[8]! - sv[5]! * sv[7]!) - sv[1]! * (sv[3]! * sv[8]! - sv[5]! * sv[6]!) + sv[2]! * (sv[3]! * sv[7]! - sv[4]! * sv[6]!);
  const d = detU * detV < 0 ? -1 : 1;
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      out[i * 3 + j] = su[i * 3]! * sv[j * 3]! + su[i * 3 + 1]! * sv[j * 3 + 1]! + d * su[i * 3 + 2]! * sv[j * 3 + 2]!;
    }
  }
  return true;
}
