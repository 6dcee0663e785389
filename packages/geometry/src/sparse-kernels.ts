/**
 * Dense kernels of the supernodal Cholesky factorisation (`sparse-cholesky.ts`). A panel is a row-major H×W slice of
 * one Float64Array (entry (i, j) at base + i·W + j): W factor columns of a supernode over its H rows. Every inner
 * loop is a dot product along contiguous rows; two rows by two columns at a time keep four independent sums in
 * registers, so each loaded value serves two multiply–adds.
 */

/**
 * Update of a target panel by a descendant panel S (width `w`, rows starting at `base`): for the scalar rows t of S
 * from `r0` on (m1 of them) and the first m2 of those as columns, subtracts L_S[t, :]·L_S[u, :]ᵀ for t ≥ u from
 * val[dstRow[t] + dstCol[u]]. dstRow holds absolute offsets of the target rows, dstCol the target columns.
 * Entries with t < u inside the pair blocks land in the target's unused upper triangle.
 */
export function panelUpdate(
  val: Float64Array, base: number, w: number, r0: number, m1: number, m2: number, dstRow: Int32Array, dstCol: Int32Array,
): void {
  for (let u = 0; u < m2; u += 2) {
    const u1 = u + 1 < m2;
    const b0 = base + (r0 + u) * w, b1 = u1 ? b0 + w : b0;
    const c0 = dstCol[u]!, c1 = u1 ? dstCol[u + 1]! : 0;
    for (let t = u; t < m1; t += 4) {
      // Rows past the end repeat row t (their sums are computed and dropped).
      const a0 = base + (r0 + t) * w;
      const a1 = t + 1 < m1 ? a0 + w : a0, a2 = t + 2 < m1 ? a0 + 2 * w : a0, a3 = t + 3 < m1 ? a0 + 3 * w : a0;
      let s00 = 0, s01 = 0, s10 = 0, s11 = 0, s20 = 0, s21 = 0, s30 = 0, s31 = 0;
      for (let k = 0; k < w; k++) {
        const y0 = val[b0 + k]!, y1 = val[b1 + k]!;
        const x0 = val[a0 + k]!, x1 = val[a1 + k]!, x2 = val[a2 + k]!, x3 = val[a3 + k]!;
        s00 += x0 * y0;
        s01 += x0 * y1;
        s10 += x1 * y0;
        s11 += x1 * y1;
        s20 += x2 * y0;
        s21 += x2 * y1;
        s30 += x3 * y0;
        s31 += x3 * y1;
      }
      let d = dstRow[t]!;
      val[d + c0]! -= s00;
      if (u1) val[d + c1]! -= s01;
      if (t + 1 < m1) {
        d = dstRow[t + 1]!;
        val[d + c0]! -= s10;
        if (u1) val[d + c1]! -= s11;
      }
      if (t + 2 < m1) {
        d = dstRow[t + 2]!;
        val[d + c0]! -= s20;
        if (u1) val[d + c1]! -= s21;
      }
      if (t + 3 < m1) {
        d = dstRow[t + 3]!;
        val[d + c0]! -= s30;
        if (u1) val[d + c1]! -= s31;
      }
    }
  }
}

/**
 * In-place Cholesky of an H×W panel whose top W×W part is the diagonal block (lower triangle read and written)
 * and whose other rows become L_below = A_below·L⁻ᵀ (row-oriented Cholesky–Banachiewicz, two rows at a time).
 * Returns −1 on success or the first column whose pivot is not positive.
 */
export function panelFactor(val: Float64Array, base: number, H: number, W: number): number {
  for (let i = 0; i < H; i += 2) {
    const i1 = i + 1 < H;
    const a0 = base + i * W, a1 = i1 ? a0 + W : a0;
    const jEnd = Math.min(i, W);
    // Columns left of both rows' diagonals: both rows at once against row j.
    for (let j = 0; j < jEnd; j++) {
      const bj = base + j * W;
      let s0 = val[a0 + j]!, s1 = val[a1 + j]!;
      for (let k = 0; k < j; k++) {
        const y = val[bj + k]!;
        s0 -= val[a0 + k]! * y;
        s1 -= val[a1 + k]! * y;
      }
      const d = val[bj + j]!;
      val[a0 + j] = s0 / d;
      if (i1) val[a1 + j] = s1 / d;
    }
    if (i < W) {
      // Diagonal of row i, then column i of row i + 1 and its diagonal.
      let d = val[a0 + i]!;
      for (let k = 0; k < i; k++) d -= val[a0 + k]! ** 2;
      if (!(d > 0)) return i;
      const lii = Math.sqrt(d);
      val[a0 + i] = lii;
      if (i1) {
        let s = val[a1 + i]!;
        for (let k = 0; k < i; k++) s -= val[a1 + k]! * val[a0 + k]!;
        val[a1 + i] = s / lii;
        if (i + 1 < W) {
          let d1 = val[a1 + i + 1]!;
          for (let k = 0; k <= i; k++) d1 -= val[a1 + k]! ** 2;
          if (!(d1 > 0)) return i + 1;
          val[a1 + i + 1] = Math.sqrt(d1);
        }
      }
    }
  }
  return -1;
}
