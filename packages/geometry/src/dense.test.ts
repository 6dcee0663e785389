import { describe, it, expect } from 'vitest';
import * as dense from './dense.ts';
import * as mat3 from './mat3.ts';
import { createRng, expectClose, gaussian } from './testing.ts';

function randomMatrix(rng: () => number, m: number, n: number): Float64Array {
  return Float64Array.from({ length: m * n }, () => gaussian(rng));
}
function randomSpd(rng: () => number, n: number): Float64Array {
  const b = randomMatrix(rng, n + 5, n);
  const a = dense.gram(new Float64Array(n * n), b, n + 5, n);
  for (let i = 0; i < n; i++) a[i * n + i]! += 1;
  return a;
}
function hilbert(n: number): Float64Array {
  return Float64Array.from({ length: n * n }, (_, k) => 1 / (Math.floor(k / n) + (k % n) + 1));
}
function maxAbs(a: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]!));
  return m;
}

describe('dense Cholesky', () => {
  it('factors a random 40×40 SPD matrix (L·Lᵀ = A) and solves A·x = b', () => {
    const rng = createRng(31);
    const n = 40;
    const a = randomSpd(rng, n);
    const l = new Float64Array(n * n);
    expect(dense.choleskyFactor(l, a, n)).toEqual({ ok: true });
    const llt = dense.multiply(new Float64Array(n * n), l, dense.transpose(new Float64Array(n * n), l, n, n), n, n, n);
    expectClose(llt, a, 1e-12 * maxAbs(a), 'L·Lᵀ'); // backward stable: error ~ n·ε·‖A‖
    const xTrue = randomMatrix(rng, n, 1);
    const b = dense.mulVec(new Float64Array(n), a, xTrue, n, n);
    expectClose(dense.choleskySolve(b, l, b, n), xTrue, 1e-10, 'solve (aliased out)');
    const inv = dense.choleskyInverse(new Float64Array(n * n), l, n);
    expectClose(dense.multiply(new Float64Array(n * n), a, inv, n, n, n), dense.identity(new Float64Array(n * n), n), 1e-10, 'A·A⁻¹');
  });
  it('reports an indefinite matrix as a value with the failing column', () => {
    const a = Float64Array.of(4, 2, 0, 2, 1, 0, 0, 0, 3); // leading 2×2 block singular
    const r = dense.choleskyFactor(new Float64Array(9), a, 3);
    expect(r).toEqual({ ok: false, reason: 'not-positive-definite', index: 1 });
  });
});

describe('dense LU with partial pivoting', () => {
  it('solves a random 50×50 system to a small residual', () => {
    const rng = createRng(32);
    const n = 50;
    const a = randomMatrix(rng, n, n);
    const lu = new Float64Array(n * n), piv = new Int32Array(n);
    expect(dense.luFactor(lu, piv, a, n).ok).toBe(true);
    const xTrue = randomMatrix(rng, n, 1);
    const b = dense.mulVec(new Float64Array(n), a, xTrue, n, n);
    expectClose(dense.luSolve(new Float64Array(n), lu, piv, b, n), xTrue, 1e-9, 'x');
  });
  it('determinant of a Vandermonde matrix equals Π_{i<j}(x_j − x_i) (classical identity)', () => {
    const xs = [0.5, -1.2, 2.0, 3.3, -0.4, 1.1];
    const n = xs.length;
    const v = Float64Array.from({ length: n * n }, (_, k) => xs[Math.floor(k / n)]! ** (k % n));
    let ref = 1;
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) ref *= xs[j]! - xs[i]!;
    const lu = new Float64Array(n * n), piv = new Int32Array(n);
    expect(dense.luFactor(lu, piv, v, n).ok).toBe(true);
    expectClose(dense.luDeterminant(lu, piv, n), ref, 1e-11 * Math.abs(ref), 'det');
  });
  it('reports a singular matrix as a value', () => {
    const a = Float64Array.of(1, 2, 3, 2, 4, 6, 1, 0, 1);
    const r = dense.luFactor(new Float64Array(9), new Int32Array(3), a, 3);
    expect(r.ok).toBe(false);
  });
});

describe('dense least squares (Householder QR)', () => {
  it('recovers cubic coefficients from noise-free samples and matches the normal equations on noisy ones', () => {
    const rng = createRng(33);
    const m = 200, n = 4;
    const a = new Float64Array(m * n), b = new Float64Array(m), bNoisy = new Float64Array(m);
    const coef = [0.3, -1.5, 0.25, 0.08];
    for (let i = 0; i < m; i++) {
      const x = -3 + (6 * i) / (m - 1);
      for (let j = 0; j < n; j++) a[i * n + j] = x ** j;
      b[i] = coef.reduce((s, c, j) => s + c * x ** j, 0);
      bNoisy[i] = b[i]! + 0.1 * gaussian(rng);
    }
    const exact = dense.leastSquares(a, b, m, n);
    if (!exact.ok) throw new Error(exact.reason);
    expectClose(exact.x, coef, 1e-12, 'exact coefficients');
    expectClose(exact.residualNorm, 0, 1e-11, 'exact residual');
    const noisy = dense.leastSquares(a, bNoisy, m, n);
    if (!noisy.ok) throw new Error(noisy.reason);
    const ata = dense.gram(new Float64Array(n * n), a, m, n);
    const atb = dense.mulTransposeVec(new Float64Array(n), a, bNoisy, m, n);
    const l = new Float64Array(n * n);
    expect(dense.choleskyFactor(l, ata, n).ok).toBe(true);
    expectClose(noisy.x, dense.choleskySolve(atb, l, atb, n), 1e-10, 'QR vs normal equations');
    // optimality: the residual is orthogonal to the columns of A
    expectClose(dense.mulTransposeVec(new Float64Array(n), a, noisy.residual, m, n), [0, 0, 0, 0], 1e-10, 'Aᵀr');
  });
  it('reports rank deficiency and underdetermined systems as values', () => {
    const a = Float64Array.of(1, 2, 2, 4, 3, 6); // 3×2, column 2 = 2 × column 1
    expect(dense.leastSquares(a, Float64Array.of(1, 2, 3), 3, 2)).toMatchObject({ ok: false, reason: 'rank-deficient' });
    expect(dense.leastSquares(a, Float64Array.of(1, 2), 2, 3)).toMatchObject({ ok: false, reason: 'underdetermined' });
  });
  it('condition estimate brackets κ₂ of Hilbert matrices', () => {
    // κ₂(H₆) ≈ 1.495e7, κ₂(H₈) ≈ 1.526e10 — N. J. Higham, "Accuracy and Stability of Numerical Algorithms", 2002,
    // Hilbert matrix table (from memory). κ₁ and κ₂ differ by at most a factor n; Hager's estimate is a lower bound
    // of κ₁ that is usually within a factor 3.
    for (const [n, k2] of [[6, 1.495e7], [8, 1.526e10]] as const) {
      const r = dense.leastSquares(hilbert(n), new Float64Array(n).fill(1), n, n);
      if (!r.ok) throw new Error(r.reason);
      expect(r.conditionEstimate).toBeGreaterThan(k2 / (3 * n));
      expect(r.conditionEstimate).toBeLessThan(k2 * n);
      const sv = dense.svd(hilbert(n), n, n);
      if (!sv.ok) throw new Error(sv.reason);
      expectClose(sv.s[0]! / sv.s[n - 1]!, k2, 0.001 * k2, `κ₂(H${n}) from svd`); // table gives 4 digits
    }
  });
});

describe('dense symmetric eigen-decomposition (cyclic Jacobi)', () => {
  it('eigenvalues of the [−1, 2, −1] tridiagonal matrix are 2 − 2cos(kπ/(n+1)) (closed form, standard result)', () => {
    const n = 25;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      a[i * n + i] = 2;
      if (i > 0) a[i * n + i - 1] = a[(i - 1) * n + i] = -1;
    }
    const values = new Float64Array(n), vectors = new Float64Array(n * n);
    expect(dense.symmetricEigen(values, vectors, a, n).ok).toBe(true);
    const ref = Array.from({ length: n }, (_, k) => 2 - 2 * Math.cos(((k + 1) * Math.PI) / (n + 1)));
    expectClose(values, ref, 1e-13, 'eigenvalues');
  });
  it('A·V = V·Λ and VᵀV = I for a random symmetric 30×30 matrix', () => {
    const rng = createRng(34);
    const n = 30;
    const b = randomMatrix(rng, n, n);
    const a = Float64Array.from({ length: n * n }, (_, k) => b[k]! + b[(k % n) * n + Math.floor(k / n)]!);
    const values = new Float64Array(n), vectors = new Float64Array(n * n);
    expect(dense.symmetricEigen(values, vectors, a, n).ok).toBe(true);
    const av = dense.multiply(new Float64Array(n * n), a, vectors, n, n, n);
    const vl = Float64Array.from(vectors, (x, k) => x * values[k % n]!);
    expectClose(av, vl, 1e-12 * maxAbs(values), 'A·V − V·Λ');
    const vt = dense.transpose(new Float64Array(n * n), vectors, n, n);
    expectClose(dense.multiply(new Float64Array(n * n), vt, vectors, n, n, n), dense.identity(new Float64Array(n * n), n), 1e-13, 'VᵀV');
    for (let i = 1; i < n; i++) expect(values[i]!).toBeGreaterThanOrEqual(values[i - 1]!);
  });
});

describe('dense SVD (one-sided Jacobi)', () => {
  for (const [m, n] of [[30, 12], [12, 30], [7, 7]] as const) {
    it(`reconstructs a random ${m}×${n} matrix with orthonormal factors`, () => {
      const rng = createRng(35 + m);
      const a = randomMatrix(rng, m, n);
      const r = dense.svd(a, m, n);
      if (!r.ok) throw new Error(r.reason);
      const k = Math.min(m, n);
      const us = Float64Array.from(r.u, (x, idx) => x * r.s[idx % k]!);
      const vt = dense.transpose(new Float64Array(n * k), r.v, n, k);
      expectClose(dense.multiply(new Float64Array(m * n), us, vt, m, k, n), a, 1e-13 * 50, 'U·S·Vᵀ');
      const ut = dense.transpose(new Float64Array(m * k), r.u, m, k);
      const id = dense.identity(new Float64Array(k * k), k);
      expectClose(dense.multiply(new Float64Array(k * k), ut, r.u, k, m, k), id, 1e-13, 'UᵀU');
      expectClose(dense.multiply(new Float64Array(k * k), vt, r.v, k, n, k), id, 1e-13, 'VᵀV');
      // singular values² are the eigenvalues of AᵀA or AAᵀ (whichever is k×k)
      const g = m >= n ? dense.gram(new Float64Array(k * k), a, m, n) : dense.gram(new Float64Array(k * k), dense.transpose(new Float64Array(m * n), a, m, n), n, m);
      const ev = new Float64Array(k), evec = new Float64Array(k * k);
      expect(dense.symmetricEigen(ev, evec, g, k).ok).toBe(true);
      expectClose(Float64Array.from(r.s, (x) => x * x).reverse(), ev, 1e-11 * ev[k - 1]!, 'σ² vs eig(AᵀA)');
    });
  }
  it('handles a tall rank-2 matrix on the QR-preconditioned path (60×8): zero σ and orthonormal completed U', () => {
    const rng = createRng(39);
    const b = randomMatrix(rng, 60, 2), c = randomMatrix(rng, 2, 8);
    const a = dense.multiply(new Float64Array(480), b, c, 60, 2, 8);
    const r = dense.svd(a, 60, 8);
    if (!r.ok) throw new Error(r.reason);
    expect(r.s[1]!).toBeGreaterThan(1);
    expectClose(r.s.subarray(2), new Float64Array(6), 1e-13 * r.s[0]!, 'σ₃..σ₈'); // rounding level of ‖A‖
    const ut = dense.transpose(new Float64Array(480), r.u, 60, 8);
    expectClose(dense.multiply(new Float64Array(64), ut, r.u, 8, 60, 8), dense.identity(new Float64Array(64), 8), 1e-13, 'UᵀU');
    const us = Float64Array.from(r.u, (x, idx) => x * r.s[idx % 8]!);
    const vt = dense.transpose(new Float64Array(64), r.v, 8, 8);
    expectClose(dense.multiply(new Float64Array(480), us, vt, 60, 8, 8), a, 1e-13 * 20 * maxAbs(a), 'U·S·Vᵀ');
  });
  it('handles a rank-1 matrix: one non-zero singular value and a complete orthonormal U', () => {
    const u0 = [1, 2, 3, 4], v0 = [2, -1, 0.5];
    const a = Float64Array.from({ length: 12 }, (_, k) => u0[Math.floor(k / 3)]! * v0[k % 3]!);
    const r = dense.svd(a, 4, 3);
    if (!r.ok) throw new Error(r.reason);
    expectClose(r.s, [Math.hypot(...u0) * Math.hypot(...v0), 0, 0], 1e-13, 'σ');
    const ut = dense.transpose(new Float64Array(12), r.u, 4, 3);
    expectClose(dense.multiply(new Float64Array(9), ut, r.u, 3, 4, 3), dense.identity(new Float64Array(9), 3), 1e-13, 'UᵀU');
  });
});

describe('svd3 (dedicated 3×3)', () => {
  function check(a: Float64Array, what: string): void {
    const u = mat3.create(), v = mat3.create(), s = new Float64Array(3);
    expect(dense.svd3(u, s, v, a)).toBe(true);
    const us = Float64Array.from(u, (x, k) => x * s[k % 3]!);
    const vt = mat3.transpose(mat3.create(), v);
    const scale = Math.max(1, maxAbs(a));
    expectClose(mat3.multiply(mat3.create(), us, vt), a, 1e-14 * 20 * scale, `${what}: U·S·Vᵀ`);
    const i3 = mat3.create();
    expectClose(mat3.multiply(mat3.create(), mat3.transpose(mat3.create(), u), u), i3, 1e-14 * 10, `${what}: UᵀU`);
    expectClose(mat3.multiply(mat3.create(), vt, v), i3, 1e-14 * 10, `${what}: VᵀV`);
    expect(s[0]! >= s[1]! && s[1]! >= s[2]! && s[2]! >= 0).toBe(true);
  }
  it('decomposes 1,000 random matrices', () => {
    const rng = createRng(36);
    for (let i = 0; i < 1000; i++) check(randomMatrix(rng, 3, 3), `case ${i}`);
  });
  it('handles rank 2, rank 1, zero, rotations and repeated singular values', () => {
    check(Float64Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9), 'rank 2');
    check(Float64Array.of(1, 2, 3, 2, 4, 6, -1, -2, -3), 'rank 1');
    check(new Float64Array(9), 'zero');
    check(Float64Array.of(0, -1, 0, 1, 0, 0, 0, 0, 1), 'rotation');
    check(Float64Array.of(2, 0, 0, 0, 2, 0, 0, 0, -2), 'repeated');
  });
  it('nearestRotation returns a proper rotation and recovers a perturbed one', () => {
    const r = Float64Array.of(0, -1, 0, 1, 0, 0, 0, 0, 1);
    const noisy = Float64Array.from(r, (x, k) => x + 1e-6 * Math.sin(k + 1));
    const out = mat3.create();
    expect(dense.nearestRotation(out, noisy)).toBe(true);
    expectClose(out, r, 3e-6, 'projected rotation'); // perturbation of 1e-6 per entry
    expect(dense.nearestRotation(out, Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, -1))).toBe(true);
    expectClose(mat3.determinant(out), 1, 1e-15, 'det of projected reflection');
  });
});
