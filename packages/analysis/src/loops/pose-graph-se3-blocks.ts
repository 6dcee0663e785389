/**
 * Normal-equation terms of one SE(3) edge from the block structure of its Jacobians (`se3Edge`): both are
 * [[X, Y], [0, Z]] in 3×3 blocks (rows r_t, r_φ; columns δt, δφ), with Y = 0 for the `to` node, and the information
 * is wt·I₃ ⊕ wr·I₃, so
 *   JaᵀWJc = [[wt·XaᵀXc, wt·XaᵀYc], [wt·YaᵀXc, wt·YaᵀYc + wr·ZaᵀZc]],  JaᵀWr = [wt·Xaᵀr_t; wt·Yaᵀr_t + wr·Zaᵀr_φ].
 * Ten 3×3 products per edge instead of the dense 6×6 ones, the same sums up to round-off.
 */

/**
 * out[o + (ac + r)·6 + bc + c] += s·Σ_k A[(k0 + k)·6 + ac + r]·B[(k0 + k)·6 + bc + c] for r, c < 3: the 3×3 block
 * s·A_subᵀ·B_sub of rows k0 … k0 + 2 of two 6×6 row-major matrices, added at block (ac, bc) of a 6×6 block
 * (transposed into block (bc, ac) when `tr`).
 */
function addAtB(out: Float64Array, o: number, A: Float64Array, ac: number, B: Float64Array, bc: number, k0: number, s: number, tr: boolean): void {
  const a0 = k0 * 6 + ac, b0 = k0 * 6 + bc;
  for (let r = 0; r < 3; r++) {
    const x0 = A[a0 + r]!, x1 = A[a0 + 6 + r]!, x2 = A[a0 + 12 + r]!;
    for (let c = 0; c < 3; c++) {
      const v = s * (x0 * B[b0 + c]! + x1 * B[b0 + 6 + c]! + x2 * B[b0 + 12 + c]!);
      if (tr) out[o + (bc + c) * 6 + ac + r]! += v;
      else out[o + (ac + r) * 6 + bc + c]! += v;
    }
  }
}

/** grad[o + ac + r] += s·Σ_k A[(k0 + k)·6 + ac + r]·v[k0 + k]: s·A_subᵀ·v_sub into the 6-vector at o. */
function addAtv(grad: Float64Array, o: number, A: Float64Array, ac: number, v: Float64Array, k0: number, s: number): void {
  for (let r = 0; r < 3; r++) {
    const a = k0 * 6 + ac + r;
    grad[o + ac + r]! += s * (A[a]! * v[k0]! + A[a + 6]! * v[k0 + 1]! + A[a + 12]! * v[k0 + 2]!);
  }
}

/**
 * Adds edge i → j to the diagonal blocks at `di`, `dj`, the pair block at `po` (H[i, j], or its transpose when
 * `flipped`) and the gradient at `gi`, `gj`. Ji, Jj: 6×6 row-major; r: residual [r_t, r_φ]; wt, wr: weighted
 * information of translation and rotation.
 */
export function addSe3Edge(
  Ji: Float64Array, Jj: Float64Array, r: Float64Array, wt: number, wr: number,
  diag: Float64Array, di: number, dj: number, off: Float64Array, po: number, flipped: boolean,
  grad: Float64Array, gi: number, gj: number,
): void {
  // H[i, i]: XᵀX, XᵀY and its mirror, YᵀY + ZᵀZ.
  addAtB(diag, di, Ji, 0, Ji, 0, 0, wt, false);
  addAtB(diag, di, Ji, 0, Ji, 3, 0, wt, false);
  addAtB(diag, di, Ji, 0, Ji, 3, 0, wt, true);
  addAtB(diag, di, Ji, 3, Ji, 3, 0, wt, false);
  addAtB(diag, di, Ji, 3, Ji, 3, 3, wr, false);
  // H[j, j] (Yj = 0): XᵀX, ZᵀZ.
  addAtB(diag, dj, Jj, 0, Jj, 0, 0, wt, false);
  addAtB(diag, dj, Jj, 3, Jj, 3, 3, wr, false);
  // H[i, j]: XiᵀXj, YiᵀXj, ZiᵀZj.
  addAtB(off, po, Ji, 0, Jj, 0, 0, wt, flipped);
  addAtB(off, po, Ji, 3, Jj, 0, 0, wt, flipped);
  addAtB(off, po, Ji, 3, Jj, 3, 3, wr, flipped);
  addAtv(grad, gi, Ji, 0, r, 0, wt);
  addAtv(grad, gi, Ji, 3, r, 0, wt);
  addAtv(grad, gi, Ji, 3, r, 3, wr);
  addAtv(grad, gj, Jj, 0, r, 0, wt);
  addAtv(grad, gj, Jj, 3, r, 3, wr);
}
