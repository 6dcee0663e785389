/**
 * Pose jumps: position steps between consecutive keyframes that the IMU does not explain.
 *
 * What: a jump J (m) inside the keyframe interval (b, c) makes the alignment residual of triplet (a, b, c) ≈ +s·J/Δt
 * and that of (b, c, d) ≈ −s·J/Δt (alignment-rows.ts); J ≈ (e_r − e_{r+1})·Δt/2 (m, after scaling by s).
 * Method: residual differencing on the solved alignment (common practice for innovation-based jump detection);
 * candidates above 8 robust sigmas (MAD of the statistic over the run) and 5 cm are reported.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { madSigma } from './small-math.ts';

export interface PoseJump {
  tStart: number;
  tEnd: number;
  /** Unexplained step, metres. */
  jumpM: number;
}

export function findPoseJumps(rows: AlignmentRows, rowScale: Float64Array, runScale: number, g: Float64Array, ba: Float64Array): PoseJump[] {
  const n = rows.n;
  if (n < 10) return [];
  const e = new Float64Array(3 * n);
  for (let r = 0; r < n; r++) {
    const s = Number.isFinite(rowScale[r]!) ? rowScale[r]! : runScale;
    for (let i = 0; i < 3; i++) {
      let mb = 0;
      for (let j = 0; j < 3; j++) mb += rows.m[9 * r + 3 * i + j]! * ba[j]!;
      e[3 * r + i] = s * rows.lam[3 * r + i]! + rows.beta[r]! * g[i]! - mb - rows.y[3 * r + i]!;
    }
  }
  const stat = new Float64Array(n - 1);
  for (let r = 0; r + 1 < n; r++) {
    const dt = -rows.beta[r]!; // ½(Δt_ab + Δt_bc) ≈ one alignment interval
    stat[r] = (Math.hypot(e[3 * r]! - e[3 * r + 3]!, e[3 * r + 1]! - e[3 * r + 4]!, e[3 * r + 2]! - e[3 * r + 5]!) * dt) / 2;
  }
  const sigma = Math.max(madSigma(stat), 1e-4);
  const out: PoseJump[] = [];
  for (let r = 1; r + 1 < n - 1; r++) {
    const v = stat[r]!;
    if (v < 8 * sigma || v < 0.05 || v < stat[r - 1]! || v < stat[r + 1]!) continue;
    out.push({ tStart: rows.t[r]!, tEnd: rows.t[r + 1]!, jumpM: v });
  }
  return out;
}
