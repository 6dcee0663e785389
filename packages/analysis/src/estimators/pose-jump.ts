/**
 * Pose jumps: position steps between consecutive keyframes that the IMU does not explain.
 *
 * What: a jump J (m) inside the keyframe interval (b, c) makes the alignment residual of triplet (a, b, c) ≈ +s·J/Δt
 * and that of (b, c, d) ≈ −s·J/Δt (alignment-rows.ts); J ≈ (e_r − e_{r+1})·Δt/2 (m, after scaling by s).
 * Consecutive rows share keyframes (`rows.overlap` rows per independent triplet), so one jump shows as a block of
 * positive residuals followed by a block of negative ones: the difference statistic peaks at J at the jump and has
 * side lobes of J/2 one block earlier and later. Only the largest statistic within ±2 blocks is kept (non-maximum
 * suppression over the span of rows one jump can reach), and only when it stands out from its immediate neighbours
 * (which the jump model puts at zero) by at least half its size.
 * Scale and gravity: the window scale and run gravity where the scale was observable; elsewhere a local least-squares
 * scale and gravity over ±`localS` seconds of rows, so that a scale or gravity error (which leaves a smooth residual)
 * is not taken for a jump while the run-level scale is unobservable.
 * Method: residual differencing on the solved alignment (common practice for innovation-based jump detection);
 * candidates above 8 robust sigmas (MAD of the statistic over the run) and 5 cm are reported.
 */
import { robust } from '@plumbline/geometry';
import type { AlignmentRows } from './alignment-rows.ts';

export interface PoseJump {
  tStart: number;
  tEnd: number;
  /** Unexplained step, metres. */
  jumpM: number;
}

/** Right-hand side z_r = y_r + M_r·ba_r − β_r·g of row r into out (3-vector); ba holds the bias per row (stride 3). */
function rowTarget(rows: AlignmentRows, r: number, g: Float64Array, ba: Float64Array, out: Float64Array): void {
  for (let i = 0; i < 3; i++) {
    let z = rows.y[3 * r + i]! - rows.beta[r]! * g[i]!;
    for (let j = 0; j < 3; j++) z += rows.m[9 * r + 3 * i + j]! * ba[3 * r + j]!;
    out[i] = z;
  }
}

/**
 * Local least squares of scale and gravity over the rows within ±halfS seconds of each row: minimises
 * Σ|s·λ_r + β_r·g − w_r|², w_r = y_r + M_r·ba, by prefix sums (O(n)). The normal equations are solved by eliminating
 * g = (Σβw − s·Σβλ)/Σβ². Scale NaN without excitation. Used where the window fit gave no scale, which is also where
 * the run-level gravity may be missing (no excited window), so both come from the neighbourhood.
 */
function localFit(rows: AlignmentRows, ba: Float64Array, halfS: number): { s: Float64Array; g: Float64Array } {
  const n = rows.n, K = 9, acc = new Float64Array(K * (n + 1)), w = new Float64Array(3), zero = new Float64Array(3);
  for (let r = 0; r < n; r++) {
    rowTarget(rows, r, zero, ba, w);
    const l0 = rows.lam[3 * r]!, l1 = rows.lam[3 * r + 1]!, l2 = rows.lam[3 * r + 2]!, b = rows.beta[r]!, o = K * r;
    // Running sums of λλ, λ·w, β², βλ (3), βw (3).
    acc[o + 9] = acc[o]! + (l0 * l0 + l1 * l1 + l2 * l2);
    acc[o + 10] = acc[o + 1]! + (l0 * w[0]! + l1 * w[1]! + l2 * w[2]!);
    acc[o + 11] = acc[o + 2]! + b * b;
    acc[o + 12] = acc[o + 3]! + b * l0;
    acc[o + 13] = acc[o + 4]! + b * l1;
    acc[o + 14] = acc[o + 5]! + b * l2;
    acc[o + 15] = acc[o + 6]! + b * w[0]!;
    acc[o + 16] = acc[o + 7]! + b * w[1]!;
    acc[o + 17] = acc[o + 8]! + b * w[2]!;
  }
  const s = new Float64Array(n), g = new Float64Array(3 * n);
  let lo = 0, hi = 0;
  for (let r = 0; r < n; r++) {
    while (rows.t[lo]! < rows.t[r]! - halfS) lo++;
    while (hi < n && rows.t[hi]! <= rows.t[r]! + halfS) hi++;
    const h = K * hi, l = K * lo;
    const ll = acc[h]! - acc[l]!, lw = acc[h + 1]! - acc[l + 1]!, bb = acc[h + 2]! - acc[l + 2]!;
    const bl0 = acc[h + 3]! - acc[l + 3]!, bl1 = acc[h + 4]! - acc[l + 4]!, bl2 = acc[h + 5]! - acc[l + 5]!;
    const bw0 = acc[h + 6]! - acc[l + 6]!, bw1 = acc[h + 7]! - acc[l + 7]!, bw2 = acc[h + 8]! - acc[l + 8]!;
    if (!(bb > 0)) {
      s[r] = Number.NaN;
      continue;
    }
    // Schur complement of the gravity block: (Σλλ − |Σβλ|²/Σβ²)·s = Σλw − Σβλ·Σβw/Σβ².
    const den = ll - (bl0 * bl0 + bl1 * bl1 + bl2 * bl2) / bb;
    const num = lw - (bl0 * bw0 + bl1 * bw1 + bl2 * bw2) / bb;
    const sr = den > 1e-12 * Math.max(ll, 1e-300) ? num / den : 0;
    s[r] = den > 0 ? sr : Number.NaN;
    g[3 * r] = (bw0 - sr * bl0) / bb;
    g[3 * r + 1] = (bw1 - sr * bl1) / bb;
    g[3 * r + 2] = (bw2 - sr * bl2) / bb;
  }
  return { s, g };
}

export function findPoseJumps(rows: AlignmentRows, rowScale: Float64Array, runScale: number, g: Float64Array, ba: Float64Array, localS = 15): PoseJump[] {
  const n = rows.n;
  if (n < 10) return [];
  const local = localFit(rows, ba, localS);
  const e = new Float64Array(3 * n), z = new Float64Array(3);
  for (let r = 0; r < n; r++) {
    const own = Number.isFinite(rowScale[r]!);
    const s = own ? rowScale[r]! : local.s[r]! > 0 ? local.s[r]! : runScale;
    rowTarget(rows, r, own ? g : local.g.subarray(3 * r, 3 * r + 3), ba, z);
    for (let i = 0; i < 3; i++) e[3 * r + i] = s * rows.lam[3 * r + i]! - z[i]!;
  }
  const stat = new Float64Array(n - 1);
  for (let r = 0; r + 1 < n; r++) {
    const dt = -rows.beta[r]!; // ½(Δt_ab + Δt_bc) ≈ one alignment interval
    stat[r] = (Math.hypot(e[3 * r]! - e[3 * r + 3]!, e[3 * r + 1]! - e[3 * r + 4]!, e[3 * r + 2]! - e[3 * r + 5]!) * dt) / 2;
  }
  const sigma = Math.max(robust.mad(stat).sigma, 1e-4);
  const reach = 2 * Math.max(1, Math.round(rows.overlap));
  const out: PoseJump[] = [];
  for (let r = 1; r + 1 < n - 1; r++) {
    const v = stat[r]!;
    // A jump inside one keyframe interval changes only this difference: the model puts the neighbours at ~0. A hump
    // spread over several rows is a smooth misfit (e.g. an attitude or scale error during a manoeuvre), not a jump.
    const sharp = v - Math.max(stat[r - 1]!, stat[r + 1]!) >= 0.5 * v;
    if (v < 8 * sigma || v < 0.05 || !sharp) continue;
    let peak = true;
    for (let k = Math.max(0, r - reach); k <= Math.min(n - 2, r + reach) && peak; k++) {
      // Ties go to the earlier row so a flat top yields one jump.
      if (stat[k]! > v || (stat[k]! === v && k < r)) peak = false;
    }
    if (peak) out.push({ tStart: rows.t[r]!, tEnd: rows.t[r + 1]!, jumpM: v });
  }
  return out;
}
