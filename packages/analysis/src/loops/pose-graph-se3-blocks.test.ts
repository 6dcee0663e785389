import { createRng } from '@plumbline/geometry/testing';
import { describe, expect, it } from 'vitest';
import { addSe3Edge } from './pose-graph-se3-blocks.ts';

/** Dense reference: A·ᵀW·B for 6×6 row-major A, B and W = diag(wt, wt, wt, wr, wr, wr). */
function denseAtWB(A: Float64Array, B: Float64Array, wt: number, wr: number): Float64Array {
  const out = new Float64Array(36);
  for (let r = 0; r < 6; r++) for (let c = 0; c < 6; c++) for (let k = 0; k < 6; k++) out[r * 6 + c]! += A[k * 6 + r]! * (k < 3 ? wt : wr) * B[k * 6 + c]!;
  return out;
}

describe('SE(3) edge normal equations by 3×3 blocks', () => {
  for (const flipped of [false, true]) {
    it(`match the dense JᵀWJ and JᵀWr (flipped pair: ${flipped})`, () => {
      const rng = createRng(11);
      // The structure of se3Edge's Jacobians: rows 3–5 × columns 0–2 are zero in both, rows 0–2 × columns 3–5 in Jj.
      const Ji = new Float64Array(36), Jj = new Float64Array(36), r = Float64Array.from({ length: 6 }, () => rng() - 0.5);
      for (let a = 0; a < 6; a++) for (let c = 0; c < 6; c++) {
        if (a >= 3 && c < 3) continue;
        Ji[a * 6 + c] = rng() - 0.5;
        if (!(a < 3 && c >= 3)) Jj[a * 6 + c] = rng() - 0.5;
      }
      const wt = 37, wr = 910;
      const diag = new Float64Array(72), off = new Float64Array(36), grad = new Float64Array(12);
      addSe3Edge(Ji, Jj, r, wt, wr, diag, 0, 36, off, 0, flipped, grad, 0, 6);
      const hii = denseAtWB(Ji, Ji, wt, wr), hjj = denseAtWB(Jj, Jj, wt, wr), hij = denseAtWB(Ji, Jj, wt, wr);
      // Round-off only: entries are O(1e3), so 1e-9 absolute.
      for (let k = 0; k < 36; k++) {
        expect(Math.abs(diag[k]! - hii[k]!)).toBeLessThan(1e-9);
        expect(Math.abs(diag[36 + k]! - hjj[k]!)).toBeLessThan(1e-9);
        const rr = Math.floor(k / 6), cc = k % 6;
        expect(Math.abs((flipped ? off[cc * 6 + rr]! : off[k]!) - hij[k]!)).toBeLessThan(1e-9);
      }
      for (let c = 0; c < 6; c++) {
        let gi = 0, gj = 0;
        for (let k = 0; k < 6; k++) {
          gi += Ji[k * 6 + c]! * (k < 3 ? wt : wr) * r[k]!;
          gj += Jj[k * 6 + c]! * (k < 3 ? wt : wr) * r[k]!;
        }
        expect(Math.abs(grad[c]! - gi)).toBeLessThan(1e-9);
        expect(Math.abs(grad[6 + c]! - gj)).toBeLessThan(1e-9);
      }
    });
  }
});
