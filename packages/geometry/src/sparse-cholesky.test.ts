import { describe, expect, it } from 'vitest';
import { createBlockCholesky } from './sparse-cholesky.ts';
import { minimumDegreeSymbolic } from './sparse-ordering.ts';
import { createRng, expectClose } from './testing.ts';

/** Random SPD block system: A = Σ_e J_e^T J_e over random edges plus a diagonal floor, returned sparse and dense. */
function randomSystem(seed: number, n: number, b: number, extraEdges: number) {
  const rng = createRng(seed);
  const pairs: number[] = [];
  for (let i = 0; i + 1 < n; i++) pairs.push(i, i + 1); // a chain like odometry
  for (let e = 0; e < extraEdges; e++) {
    const a = Math.floor(rng() * n), c = Math.floor(rng() * n);
    if (a !== c) pairs.push(a, c); // loop-like edges, duplicates allowed
  }
  const m = pairs.length / 2, bb = b * b, N = n * b;
  const diag = new Float64Array(n * bb), off = new Float64Array(m * bb), dense = new Float64Array(N * N);
  const add = (i: number, j: number, v: number) => (dense[i * N + j]! += v);
  for (let i = 0; i < n; i++) for (let r = 0; r < b; r++) {
    diag[i * bb + r * b + r] = 0.5;
    add(i * b + r, i * b + r, 0.5);
  }
  for (let e = 0; e < m; e++) {
    // Edge term [Ja Jb]^T [Ja Jb] with random b×b Ja, Jb.
    const a = pairs[2 * e]!, c = pairs[2 * e + 1]!;
    const Ja = Array.from({ length: bb }, () => rng() - 0.5), Jb = Array.from({ length: bb }, () => rng() - 0.5);
    for (let r = 0; r < b; r++) for (let s = 0; s < b; s++) {
      let aa = 0, cc = 0, ac = 0;
      for (let t = 0; t < b; t++) {
        aa += Ja[t * b + r]! * Ja[t * b + s]!;
        cc += Jb[t * b + r]! * Jb[t * b + s]!;
        ac += Ja[t * b + r]! * Jb[t * b + s]!;
      }
      diag[a * bb + r * b + s]! += aa;
      diag[c * bb + r * b + s]! += cc;
      off[e * bb + r * b + s] = ac;
      add(a * b + r, a * b + s, aa);
      add(c * b + r, c * b + s, cc);
      add(a * b + r, c * b + s, ac);
      add(c * b + s, a * b + r, ac);
    }
  }
  const rhs = Float64Array.from({ length: N }, () => rng() * 2 - 1);
  return { pairs: Int32Array.from(pairs), diag, off, dense, rhs, N };
}

/** Dense reference: Gaussian elimination with partial pivoting (textbook, common practice). */
function denseSolve(A: Float64Array, rhs: Float64Array, N: number): Float64Array {
  const M = Float64Array.from(A), x = Float64Array.from(rhs);
  for (let k = 0; k < N; k++) {
    let p = k;
    for (let i = k + 1; i < N; i++) if (Math.abs(M[i * N + k]!) > Math.abs(M[p * N + k]!)) p = i;
    for (let j = 0; j < N; j++) [M[k * N + j], M[p * N + j]] = [M[p * N + j]!, M[k * N + j]!];
    [x[k], x[p]] = [x[p]!, x[k]!];
    for (let i = k + 1; i < N; i++) {
      const f = M[i * N + k]! / M[k * N + k]!;
      for (let j = k; j < N; j++) M[i * N + j]! -= f * M[k * N + j]!;
      x[i]! -= f * x[k]!;
    }
  }
  for (let k = N - 1; k >= 0; k--) {
    let s = x[k]!;
    for (let j = k + 1; j < N; j++) s -= M[k * N + j]! * x[j]!;
    x[k] = s / M[k * N + k]!;
  }
  return x;
}

describe('block sparse Cholesky against a dense reference solve', () => {
  // The last three have dense trailing parts: supernodes wider than a panel (64 scalar columns) are split.
  for (const [seed, n, b, extra] of [[1, 40, 3, 10], [2, 60, 6, 25], [3, 25, 1, 40], [4, 80, 2, 5], [5, 150, 1, 700], [6, 60, 6, 150], [8, 90, 3, 250]] as const) {
    it(`random SPD system seed ${seed}: n=${n}, b=${b}, ${extra} extra edges`, () => {
      const s = randomSystem(seed, n, b, extra);
      const chol = createBlockCholesky(n, b, s.pairs);
      expect(chol.factorize(s.diag, s.off)).toEqual({ ok: true });
      const x = chol.solve(new Float64Array(s.N), s.rhs);
      // Well-conditioned (diagonal floor 0.5): agreement to 1e-9 is round-off only.
      expectClose(x, denseSolve(s.dense, s.rhs, s.N), 1e-9, 'x');
    });
  }
  it('refactorises with a diagonal shift (Levenberg–Marquardt damping)', () => {
    const s = randomSystem(7, 30, 3, 8);
    const shift = new Float64Array(s.N).fill(2.5);
    const chol = createBlockCholesky(30, 3, s.pairs);
    chol.factorize(s.diag, s.off, shift);
    for (let i = 0; i < s.N; i++) s.dense[i * s.N + i]! += 2.5;
    expectClose(chol.solve(new Float64Array(s.N), s.rhs), denseSolve(s.dense, s.rhs, s.N), 1e-9, 'x');
  });
  it('reports an indefinite matrix as a value', () => {
    const chol = createBlockCholesky(2, 1, Int32Array.of(0, 1));
    const r = chol.factorize(Float64Array.of(1, 1), Float64Array.of(2));
    expect(r.ok).toBe(false);
  });
});

describe('minimum-degree ordering', () => {
  it('gives a chain no fill (exact: a path graph is a tree)', () => {
    const n = 1000, pairs = new Int32Array(2 * (n - 1));
    for (let i = 0; i + 1 < n; i++) pairs.set([i, i + 1], 2 * i);
    expect(minimumDegreeSymbolic(n, pairs).colStart[n]).toBe(n - 1);
  });
  it('orders a clique by node index with a full factor (all degrees tie; the lowest index goes first)', () => {
    const n = 40, pairs: number[] = [];
    for (let a = 0; a < n; a++) for (let c = a + 1; c < n; c++) pairs.push(c, a);
    const sym = minimumDegreeSymbolic(n, pairs);
    expect(Array.from(sym.perm)).toEqual(Array.from({ length: n }, (_, i) => i));
    expect(sym.colStart[n]).toBe((n * (n - 1)) / 2);
    expect(Array.from(sym.rowIdx.subarray(sym.colStart[0]!, sym.colStart[1]!))).toEqual(Array.from({ length: n - 1 }, (_, i) => i + 1));
  });
  it('gives a single cycle fill of one block per column at most (n − 1 + n − 3)', () => {
    const n = 500, pairs: number[] = [];
    for (let i = 0; i < n; i++) pairs.push(i, (i + 1) % n);
    const sym = minimumDegreeSymbolic(n, pairs);
    expect(sym.colStart[n]).toBeLessThanOrEqual(2 * n - 3);
    expect(Array.from(sym.perm).sort((a, b) => a - b)).toEqual(Array.from({ length: n }, (_, i) => i));
  });
});
