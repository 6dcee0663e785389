/**
 * Scale drift and scale steps of the odometry.
 *
 * What: the trend of the scale against distance travelled (% of scale per 100 m, with a 95 % CI), and
 * steps (e.g. a tracking re-initialisation) located in time with a 1-sigma time uncertainty.
 * Method: trend by iteratively reweighted least squares (Huber) of a linear-in-distance scale over every alignment
 * row, with the steps as separate levels; cross-checked by the Theil–Sen estimator (median of pairwise slopes) with
 * the distribution-free CI of P. K. Sen, "Estimates of the regression coefficient based on Kendall's tau", JASA 63,
 * 1968, on non-overlapping windows (used alone when the row fit is singular).
 * Steps: the velocity mismatch between the IMU and the odometry (running sum of alignment residuals at a fixed scale)
 * jumps by (s0/s1 − 1)·v at a scale step and follows the odometry velocity afterwards, even at constant velocity.
 * A local least-squares step model is scanned along the run (a change-point search in the manner of E. S. Page,
 * "Continuous inspection schemes", Biometrika 41, 1954), significant candidates of at least 2.5 % are kept (common
 * practice) and each is located by the best split at keyframe resolution, with Δχ² = 1 bounds.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { theilSen } from '@plumbline/geometry';
import { medianOf, solveSpd, solveSpdInto } from './small-math.ts';
import { noScalar, scalar, type ScalarResult, type WindowSeries } from './types.ts';

export interface ScaleStep {
  /** Step time (IMU clock) and its 1-sigma, s. */
  t: number;
  sigmaS: number;
  before: number;
  after: number;
  /** (after/before − 1)·100 */
  stepPct: number;
}

export interface ScaleDriftResult {
  driftPctPer100m: ScalarResult;
  ci95: [number, number] | null;
  /** Cross-check: Sen's 95 % CI of the Theil–Sen slope of the window scales (%/100 m), or null. */
  theilSenCi95: [number, number] | null;
  steps: ScaleStep[];
}

export interface ScaleDriftOptions {
  /** Smallest step reported, % (default 2.5). */
  minStepPct?: number;
}

/**
 * `scale`: window scale series (NaN = unobservable); `distanceM`: metric distance at each window centre; `raw`: the
 * window scales and sigmas before the observability cut (for step detection); rows, gravity and bias: the alignment
 * rows with the run-level gravity and the accelerometer bias per row (stride 3; trend and step location).
 */
export function estimateScaleDrift(
  scale: WindowSeries, distanceM: Float64Array, windowS: number, windowOverlap: number,
  raw: { t: Float64Array; value: Float64Array; sigma: Float64Array },
  rows: AlignmentRows, gravity: Float64Array, bias: Float64Array, options: ScaleDriftOptions = {},
): ScaleDriftResult {
  const stride = windowOverlap >= 0.5 ? Math.round(1 / (1 - windowOverlap)) : 1;
  const xs: number[] = [], ys: number[] = [];
  for (let w = 0; w < scale.value.length; w += stride) {
    if (Number.isFinite(scale.value[w]!)) {
      xs.push(distanceM[w]!);
      ys.push(scale.value[w]!);
    }
  }
  const level = medianOf(ys);
  const steps = findScaleSteps(raw, windowS, (t0, t1, before, after) => locateStep(rows, gravity, bias, t0, t1, before, after), options);
  const thin = thinPoints(xs, ys, 400);
  // Theil–Sen with Sen's 95 % interval (geometry robust-fit); fewer than 4 points carry no trend.
  const fit = thin.x.length >= 4 ? theilSen(Float64Array.from(thin.x), Float64Array.from(thin.y)) : null;
  const ts = fit && fit.ok ? { slope: fit.slope, lo: fit.slopeLow, hi: fit.slopeHigh } : null;
  const ciTs: [number, number] | null = ts && level > 0 ? [(ts.lo * 1e4) / level, (ts.hi * 1e4) / level] : null;
  const irls = driftFromRows(rows, gravity, bias, steps, metresPerOdomUnit(scale, distanceM, rows));
  if (irls !== null) {
    return { driftPctPer100m: scalar(irls.pct, irls.sigma, '%/100m'), ci95: [irls.pct - 1.96 * irls.sigma, irls.pct + 1.96 * irls.sigma], theilSenCi95: ciTs, steps };
  }
  if (ts === null || !(level > 0)) {
    return { driftPctPer100m: noScalar('%/100m', 'unobservable: too little acceleration excitation to follow the scale'), ci95: null, theilSenCi95: null, steps };
  }
  const k = (100 * 100) / level;
  return { driftPctPer100m: scalar(ts.slope * k, ((ts.hi - ts.lo) * k) / (2 * 1.96), '%/100m'), ci95: ciTs, theilSenCi95: ciTs, steps };
}

/** Metres per odometry unit implied by the window distances (distanceM was scaled by the run scale). */
function metresPerOdomUnit(scale: WindowSeries, distanceM: Float64Array, rows: AlignmentRows): number {
  const last = distanceM.length - 1;
  const dOdom = rows.distance[rows.n - 1]!;
  return last >= 0 && dOdom > 0 && distanceM[last]! > 0 ? distanceM[last]! / distanceAtTime(rows, scale.t[last]!) : 1;
}

function distanceAtTime(rows: AlignmentRows, t: number): number {
  let r = 0;
  while (r + 1 < rows.n && rows.t[r + 1]! <= t) r++;
  return Math.max(rows.distance[r]!, 1e-9);
}

/**
 * Drift by iteratively reweighted least squares over all alignment rows: s(d) = a + b·d + Σ c_j·[t ≥ t_j]
 * (steps found before are separate levels), residual s(d_r)·λ_r − (y_r + M_r·ba − β_r·g), Huber weights
 * (k = 1.345σ). Drift = b/a per 100 m; σ from (JᵀWJ)⁻¹ times the residual variance.
 */
function driftFromRows(rows: AlignmentRows, g: Float64Array, ba: Float64Array, steps: ScaleStep[], mPerUnit: number): { pct: number; sigma: number } | null {
  const S = steps.length, np = 2 + S;
  // With the step times sorted, the levels active at a row are a prefix: steps 0..k−1 with k the row's level (the
  // order of the step parameters does not change a, b or σ_b). The normal equations are then sums over rows grouped
  // by level, built in O(rows + np²) per iteration instead of O(rows·np²) (an 8-hour run can hold many steps).
  const stepT = Float64Array.from(steps, (st) => st.t).sort();
  const level = new Int32Array(rows.n);
  for (let r = 0; r < rows.n; r++) level[r] = countAtOrBefore(stepT, rows.t[r]!);
  const z = new Float64Array(3), prefix = new Float64Array(S + 1);
  // per level: Σw·|λ|², Σw·|λ|²·d, Σw·|λ|²·d², Σw·λ·z, Σw·λ·z·d; then the same as sums over levels ≥ k
  const ll = new Float64Array(S + 1), lld = new Float64Array(S + 1), lldd = new Float64Array(S + 1);
  const lz = new Float64Array(S + 1), lzd = new Float64Array(S + 1), sum = [ll, lld, lldd, lz, lzd];
  let x: Float64Array = new Float64Array(np);
  let huber = Number.POSITIVE_INFINITY, H = new Float64Array(np * np), s2 = 0;
  for (let it = 0; it < 4; it++) {
    for (const a of sum) a.fill(0);
    for (let j = 0; j < S; j++) prefix[j + 1] = prefix[j]! + x[2 + j]!;
    let sse = 0, count = 0;
    for (let r = 0; r < rows.n; r++) {
      const d = (rows.distance[r]! * mPerUnit) / 100; // hundreds of metres
      for (let i = 0; i < 3; i++) {
        let zz = rows.y[3 * r + i]! - rows.beta[r]! * g[i]!;
        for (let j = 0; j < 3; j++) zz += rows.m[9 * r + 3 * i + j]! * ba[3 * r + j]!;
        z[i] = zz;
      }
      const l0 = rows.lam[3 * r]!, l1 = rows.lam[3 * r + 1]!, l2 = rows.lam[3 * r + 2]!, k = level[r]!;
      const sr = x[0]! + x[1]! * d + prefix[k]!;
      const e2 = (sr * l0 - z[0]!) ** 2 + (sr * l1 - z[1]!) ** 2 + (sr * l2 - z[2]!) ** 2;
      const e = Math.sqrt(e2);
      const w = it === 0 || e <= huber ? 1 : huber / e;
      sse += e2;
      count += 3;
      const wll = w * (l0 * l0 + l1 * l1 + l2 * l2), wlz = w * (l0 * z[0]! + l1 * z[1]! + l2 * z[2]!);
      ll[k] = ll[k]! + wll;
      lld[k] = lld[k]! + wll * d;
      lldd[k] = lldd[k]! + wll * d * d;
      lz[k] = lz[k]! + wlz;
      lzd[k] = lzd[k]! + wlz * d;
    }
    for (const a of sum) for (let k = S - 1; k >= 0; k--) a[k] = a[k]! + a[k + 1]!;
    H = new Float64Array(np * np);
    const rhs = new Float64Array(np);
    H[0] = ll[0]!;
    H[1] = H[np] = lld[0]!;
    H[np + 1] = lldd[0]!;
    rhs[0] = lz[0]!;
    rhs[1] = lzd[0]!;
    for (let j = 0; j < S; j++) {
      const p = 2 + j; // step j is active at levels ≥ j + 1
      H[p] = H[p * np] = ll[j + 1]!;
      H[np + p] = H[p * np + 1] = lld[j + 1]!;
      rhs[p] = lz[j + 1]!;
      for (let q = 0; q < S; q++) H[p * np + 2 + q] = ll[Math.max(j, q) + 1]!;
    }
    const sol = solveSpd(H, rhs, np);
    if (sol === null) return null;
    x = sol.x;
    s2 = sse / Math.max(1, count - np);
    huber = 1.345 * Math.sqrt(3 * s2);
  }
  const inv = solveSpd(H, new Float64Array(np), np);
  if (inv === null || !(x[0]! > 0)) return null;
  const sb = Math.sqrt(inv.inv[np + 1]! * s2);
  // Relative drift: b/a per 100 m, in percent; σ dominated by σ_b.
  return { pct: (x[1]! / x[0]!) * 100, sigma: (sb / x[0]!) * 100 };
}

/** Number of entries of the ascending array `ts` that are ≤ t (binary search). */
function countAtOrBefore(ts: Float64Array, t: number): number {
  let lo = 0, hi = ts.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (ts[mid]! <= t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Keeps at most `max` points by taking medians of equal-count bins (keeps Theil–Sen O(max²)). */
function thinPoints(x: number[], y: number[], max: number): { x: number[]; y: number[] } {
  if (x.length <= max) return { x, y };
  const bin = Math.ceil(x.length / max);
  const ox: number[] = [], oy: number[] = [];
  for (let i = 0; i < x.length; i += bin) {
    ox.push(medianOf(x.slice(i, i + bin)));
    oy.push(medianOf(y.slice(i, i + bin)));
  }
  return { x: ox, y: oy };
}

/**
 * Step candidates from the window scales (all windows that `raw` holds, observable or not, weighted by 1/σ²): at every
 * window centre, the weighted mean of the windows ending before it against those starting after it (up to 3 windows
 * each side, so the two groups share no data); z = Δ/√(σ²_before + σ²_after) above 8 and |Δ| ≥ minStepPct (default
 * 2.5 %, above the scale wander of a good front end) are kept,
 * strongest first, each located by `locateStep`, and the scan repeated with groups that do not reach across an accepted
 * step. A window whose candidate was used once is not used again, and a location at an accepted step (within its
 * 1-sigma or half a window) adds nothing: a step located more than a window from the candidate does not block the
 * candidate's own groups, which would otherwise return the same step on every pass.
 */
export function findScaleSteps(
  raw: { t: Float64Array; value: Float64Array; sigma: Float64Array }, windowS: number, locate: StepLocator, options: ScaleDriftOptions = {},
): ScaleStep[] {
  const minPct = options.minStepPct ?? 2.5;
  const n = raw.t.length;
  const steps: ScaleStep[] = [];
  const stepT: number[] = []; // accepted step times, ascending
  // Candidate per window centre (z NaN: none). It depends only on accepted steps within 4 window lengths of the centre,
  // so after each acceptance only those windows are scanned again.
  const z = new Float64Array(n).fill(Number.NaN), zBefore = new Float64Array(n), zAfter = new Float64Array(n);
  const used = new Uint8Array(n);
  const scan = (w: number): void => {
    z[w] = Number.NaN;
    if (used[w] === 1) return;
    const tb = raw.t[w]!;
    if (anyStep(stepT, tb - 2 * windowS, tb + 2 * windowS, (t) => Math.abs(t - tb) < windowS)) return;
    let wb = 0, sb = 0, wa = 0, sa = 0;
    // Window centres are sorted: only neighbours within 3.5 window lengths count.
    let j0 = w;
    while (j0 > 0 && raw.t[j0 - 1]! >= tb - 3.5 * windowS) j0--;
    for (let j = j0; j < n && raw.t[j]! <= tb + 3.5 * windowS; j++) {
      const v = raw.value[j]!, sg = raw.sigma[j]!;
      if (!Number.isFinite(v) || !(sg > 0)) continue;
      const tj = raw.t[j]!, dt = tj - tb, wt = 1 / (sg * sg);
      if (dt <= -windowS / 2 && dt >= -3.5 * windowS) {
        const lo = tj - windowS / 2;
        if (!anyStep(stepT, lo, tb, (t) => t >= lo && t <= tb)) [wb, sb] = [wb + wt, sb + wt * v];
      } else if (dt >= windowS / 2 && dt <= 3.5 * windowS) {
        const hi = tj + windowS / 2;
        if (!anyStep(stepT, tb, hi, (t) => t >= tb && t <= hi)) [wa, sa] = [wa + wt, sa + wt * v];
      }
    }
    if (wb === 0 || wa === 0) return;
    const before = sb / wb, after = sa / wa;
    const zw = Math.abs(after - before) / Math.sqrt(1 / wb + 1 / wa);
    if (zw > 8 && Math.abs(after / before - 1) * 100 >= minPct) [z[w], zBefore[w], zAfter[w]] = [zw, before, after];
  };
  for (let w = 0; w < n; w++) scan(w);
  // Greedy: accept the strongest candidate, then rescan with groups that may not reach across an accepted step.
  for (let pass = 0; pass < 50; pass++) {
    let best = -1;
    for (let w = 0; w < n; w++) if (!Number.isNaN(z[w]!) && (best < 0 || z[w]! > z[best]!)) best = w;
    if (best < 0) break;
    const tb = raw.t[best]!, before = zBefore[best]!, after = zAfter[best]!;
    const at = locate(tb - 1.5 * windowS, tb + 1.5 * windowS, before, after);
    used[best] = 1;
    z[best] = Number.NaN;
    const tol = Math.max(at.sigmaS, windowS / 2);
    if (anyStep(stepT, at.t - tol, at.t + tol, () => true)) continue;
    // Size from the window groups (acceleration-based scales); time from the velocity-mismatch split.
    steps.push({ ...at, before, after, stepPct: (after / before - 1) * 100 });
    stepT.splice(lowerBound(stepT, at.t), 0, at.t);
    for (let w = lowerBound(raw.t, at.t - 4.5 * windowS); w < n && raw.t[w]! <= at.t + 4.5 * windowS; w++) scan(w);
  }
  return steps.sort((x, y) => x.t - y.t);
}

/** Locates a step in [t0, t1] given the scales before and after it (the velocity-mismatch split of `locateStep`). */
export type StepLocator = (t0: number, t1: number, before: number, after: number) => ScaleStep;

/** First index of the ascending `xs` whose value is ≥ x (binary search). */
function lowerBound(xs: ArrayLike<number>, x: number): number {
  let lo = 0, hi = xs.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (xs[mid]! < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Whether an accepted step time in [lo, hi] (a superset of the predicate's range) satisfies `test`. */
function anyStep(stepT: number[], lo: number, hi: number, test: (t: number) => boolean): boolean {
  for (let i = lowerBound(stepT, lo); i < stepT.length && stepT[i]! <= hi; i++) if (test(stepT[i]!)) return true;
  return false;
}

/**
 * Locates a step in [t0, t1] by the velocity mismatch between the IMU and the odometry. With the scale held at the
 * level before the step (s0), the running sum C_k = Σ_{r≤k} e_r of the alignment residuals equals s0·v̄_odom − v̄_imu
 * up to a constant and a slow drift; a step to s1 at row m adds (s0/s1 − 1)·s0·v̄_odom,k for k ≥ m. For each m the
 * model C_k = c0 + c1·(t_k − t0) + κ0·s0·v̄_odom,k + κ·[k ≥ m]·s0·v̄_odom,k (κ0 absorbs an error of s0) is fitted by
 * least squares (8 unknowns); the m with the least
 * SSE wins, and its 1-sigma spans the splits within Δχ² = 1. This works at constant velocity, where the per-window
 * acceleration-based scale is blind.
 */
function locateStep(rows: AlignmentRows, g: Float64Array, ba: Float64Array, t0: number, t1: number, before: number, after: number): ScaleStep {
  let r0 = 0;
  while (r0 < rows.n && rows.t[r0]! < t0) r0++;
  let r1 = r0;
  while (r1 < rows.n && rows.t[r1]! <= t1) r1++;
  const n = r1 - r0;
  const fallback = { t: 0.5 * (t0 + t1), sigmaS: (t1 - t0) / Math.sqrt(12), before, after, stepPct: (after / before - 1) * 100 };
  if (n < 8) return fallback;
  const C = new Float64Array(3 * n);
  const acc = [0, 0, 0];
  for (let k = 0; k < n; k++) {
    const r = r0 + k;
    for (let i = 0; i < 3; i++) {
      let e = before * rows.lam[3 * r + i]! + rows.beta[r]! * g[i]! - rows.y[3 * r + i]!;
      for (let j = 0; j < 3; j++) e -= rows.m[9 * r + 3 * i + j]! * ba[3 * r + j]!;
      acc[i] = acc[i]! + e / rows.overlap;
      C[3 * k + i] = acc[i]!;
    }
  }
  const sse = new Float64Array(n).fill(Number.POSITIVE_INFINITY);
  const kappa = new Float64Array(n);
  const common = stepModelSums(rows, r0, n, C, t0, before);
  for (let m = 2; m < n - 1; m++) {
    const fit = fitStepModel(common, rows, r0, n, C, m, t0, before);
    if (fit !== null) [sse[m], kappa[m]] = fit;
  }
  let best = -1;
  for (let m = 0; m < n; m++) if (sse[m]! < (best < 0 ? Number.POSITIVE_INFINITY : sse[best]!)) best = m;
  if (best < 0) return fallback;
  const sigma2 = sse[best]! / Math.max(1, 3 * n - 8);
  let lo = best, hi = best;
  while (lo > 2 && sse[lo - 1]! - sse[best]! < sigma2) lo--;
  while (hi < n - 2 && sse[hi + 1]! - sse[best]! < sigma2) hi++;
  // The step lies inside interval (b, c) of row m: report that interval's midpoint.
  const mid = (k: number) => rows.t[r0 + k]! + 0.5 * rows.dtBc[r0 + k]!;
  const ratio = 1 + kappa[best]!; // s0/s1
  const s1 = before / ratio;
  return { t: mid(best), sigmaS: Math.max(0.5 * (mid(hi) - mid(lo)), rows.dtBc[r0 + best]! / Math.sqrt(12)), before, after: s1, stepPct: (s1 / before - 1) * 100 };
}

interface StepSums {
  /** Normal equations without the step column (index 6), and Σ C². */
  H: Float64Array;
  b: Float64Array;
  cc: number;
  /** Per-split scratch. */
  Hm: Float64Array;
  bm: Float64Array;
  L: Float64Array;
  x: Float64Array;
}

/**
 * The parts of `fitStepModel`'s normal equations that do not depend on the split m: every entry without the step
 * unknown κ (index 6). Per 3-vector row component i the Jacobian is J = [e_i, dt·e_i, [k ≥ m]·s0·v̄_k,i, s0·v̄_k,i]
 * (c0 (3), c1 (3), κ, κ0); its zero entries add nothing, so the sums below equal the dense accumulation.
 */
function stepModelSums(rows: AlignmentRows, r0: number, n: number, C: Float64Array, t0: number, s0: number): StepSums {
  const H = new Float64Array(64), b = new Float64Array(8);
  let cc = 0;
  for (let k = 0; k < n; k++) {
    const r = r0 + k, dt = rows.t[r]! - t0;
    for (let i = 0; i < 3; i++) {
      const j7 = s0 * rows.vOdom[3 * r + i]!, y = C[3 * k + i]!;
      cc += y * y;
      // rows i, 3 + i and 7 of J·Jᵀ (columns other than 6), in the order of the dense loop
      H[i * 9] = H[i * 9]! + 1;
      H[i * 8 + 3 + i] = H[i * 8 + 3 + i]! + dt;
      H[i * 8 + 7] = H[i * 8 + 7]! + j7;
      b[i] = b[i]! + y;
      if (dt !== 0) {
        const o = (3 + i) * 8;
        H[o + i] = H[o + i]! + dt * 1;
        H[o + 3 + i] = H[o + 3 + i]! + dt * dt;
        H[o + 7] = H[o + 7]! + dt * j7;
        b[3 + i] = b[3 + i]! + dt * y;
      }
      if (j7 !== 0) {
        H[56 + i] = H[56 + i]! + j7 * 1;
        H[59 + i] = H[59 + i]! + j7 * dt;
        H[63] = H[63]! + j7 * j7;
        b[7] = b[7]! + j7 * y;
      }
    }
  }
  return { H, b, cc, Hm: new Float64Array(64), bm: new Float64Array(8), L: new Float64Array(64), x: new Float64Array(8) };
}

/**
 * Least squares of C_k = c0 + c1·(t_k − t0) + (κ0 + κ·[k ≥ m])·s0·v̄_k over the 3-vector rows; returns [SSE, κ/(1+κ0)].
 * The sums without κ come from `stepModelSums`; only those with κ (rows k ≥ m) are added here.
 */
function fitStepModel(
  common: StepSums, rows: AlignmentRows, r0: number, n: number, C: Float64Array, m: number, t0: number, s0: number,
): [number, number] | null {
  const H = common.Hm, b = common.bm;
  H.set(common.H);
  b.set(common.b);
  for (let k = m; k < n; k++) {
    const r = r0 + k, dt = rows.t[r]! - t0;
    for (let i = 0; i < 3; i++) {
      const j6 = s0 * rows.vOdom[3 * r + i]!, y = C[3 * k + i]!;
      // column 6 of the rows with a non-zero entry (i, 3 + i, 7), then row 6
      H[i * 8 + 6] = H[i * 8 + 6]! + 1 * j6;
      if (dt !== 0) H[(3 + i) * 8 + 6] = H[(3 + i) * 8 + 6]! + dt * j6;
      if (j6 === 0) continue;
      H[62] = H[62]! + j6 * j6;
      H[48 + i] = H[48 + i]! + j6 * 1;
      H[51 + i] = H[51 + i]! + j6 * dt;
      H[54] = H[54]! + j6 * j6;
      H[55] = H[55]! + j6 * j6;
      b[6] = b[6]! + j6 * y;
    }
  }
  if (!solveSpdInto(common.x, common.L, H, b, 8)) return null;
  const x = common.x;
  let fitted = 0;
  for (let a = 0; a < 8; a++) fitted += x[a]! * b[a]!;
  // κ relative to the fitted pre-step level (1 + κ0): s0/s1 = (1 + κ0 + κ)/(1 + κ0).
  return [common.cc - fitted, x[6]! / (1 + x[7]!)];
}
