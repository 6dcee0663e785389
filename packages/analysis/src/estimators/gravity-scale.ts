/**
 * Visual–inertial alignment per sliding window: metric scale of the odometry, gravity in the odometry world and the
 * accelerometer bias.
 *
 * What: per window (default 10 s, 50 % overlap) the scale s (metres per odometry unit) with its 1-sigma, gravity
 * tilt against the odometry world −z (deg), residual RMS (m/s) and condition number; run-level scale (median of the
 * observable windows), gravity and accelerometer bias (joint estimate over the whole run with one free scale per
 * window, which separates a horizontal bias from a tilt when the heading changes; alignment-joint.ts). The bias is
 * one per segment of about `biasSegmentS` (default 600 s) with a random walk of density `accelBiasRandomWalk` between
 * segments: over hours a MEMS accelerometer bias wanders by several 0.01 m/s², which a single run-level bias turns
 * into scale errors of several percent in the windows far from the run mean.
 * Method: velocity-free linear system over keyframe triplets (alignment-rows.ts; Mur-Artal & Tardós, IEEE RA-L 2017),
 * linear start for (s, g), then Gauss–Newton with |g| fixed to local normal gravity and a 2-DOF tangent update
 * (Qin & Shen, IEEE T-RO 2018). Windows without acceleration excitation (metric odometry acceleration std — odometry
 * units times the window scale — below `minAccelStd`) or with σ_s above `maxScaleSigma` are reported unobservable with the reason, never as a value.
 */
import type { AlignmentRows } from './alignment-rows.ts';
import { solveJoint, type BiasSegments } from './alignment-joint.ts';
import { linearStart, solveAlignment, type SolveResult } from './alignment-solve.ts';
import { madSigma, medianOf } from './small-math.ts';
import { emptySeries, noScalar, scalar, type ScalarResult, type Unsupported, type Vec3Result, type WindowSeries } from './types.ts';

export interface GravityScaleOptions {
  windowS?: number;
  windowOverlap?: number;
  gravityMS2?: number;
  /** Odometry acceleration standard deviation below which scale is unobservable, m/s² (default 0.1). */
  minAccelStd?: number;
  /** Relative scale sigma above which a window is unobservable (default 0.004, so that 1 % is 2.5σ). */
  maxScaleSigma?: number;
  /** Estimate the accelerometer bias over the run (default true). */
  estimateBias?: boolean;
  /** Length of a bias segment, s (default 600; runs shorter than 1.5 segments have one bias). */
  biasSegmentS?: number;
  /** Accelerometer bias random walk, m/s²/√s (default DEFAULT_ACCEL_BIAS_RANDOM_WALK). */
  accelBiasRandomWalk?: number;
}

/**
 * Accelerometer bias random walk when none is given, m/s²/√s: a conservative consumer-MEMS figure (looser than most
 * data sheets imply, so that the prior does not hold back a real bias change).
 */
export const DEFAULT_ACCEL_BIAS_RANDOM_WALK = 1e-3;

export interface GravityScaleResult {
  ok: true;
  scale: WindowSeries;
  tiltDeg: WindowSeries;
  residual: WindowSeries;
  condition: Float64Array;
  accelStd: Float64Array;
  /** Odometry distance at each window centre (odometry units). */
  distance: Float64Array;
  runScale: ScalarResult;
  /** Gravity vector in the odometry world (m/s²) from the run-level joint estimate. */
  gravity: Float64Array;
  gravityTiltDeg: ScalarResult;
  /** Run-level accelerometer bias: the mean of the segment biases weighted by their row counts. */
  accelBias: Vec3Result;
  /** Accelerometer bias per alignment row (stride 3, m/s²): the bias of the row's segment; zero when unobservable. */
  rowBias: Float64Array;
  /** Scale per alignment row (of the containing window; NaN when unobservable), used for drift refinement. */
  rowScale: Float64Array;
  /**
   * Window scales and sigmas before the σ cut (NaN where no solution exists or the window has no acceleration
   * excitation: there the noise of the odometry accelerations biases the least-squares scale towards zero by far more
   * than its σ, regression dilution, which looks like a scale step of several percent).
   */
  rawScale: { t: Float64Array; value: Float64Array; sigma: Float64Array };
}

const DEG = 180 / Math.PI;

function tiltDeg(g: Float64Array): number {
  const n = Math.hypot(g[0]!, g[1]!, g[2]!);
  return Math.acos(Math.min(1, Math.max(-1, -g[2]! / n))) * DEG;
}

/** Row range [r0, r1) of each window by the row times (cursor sweep, O(rows)). */
function windowRanges(rows: AlignmentRows, windowS: number, overlap: number): { t: Float64Array; r0: Int32Array; r1: Int32Array } {
  const t0 = rows.t[0]!, t1 = rows.t[rows.n - 1]!;
  const hop = windowS * (1 - overlap);
  const nw = Math.max(1, Math.floor(Math.max(0, t1 - t0 - windowS) / hop) + 1);
  const out = { t: new Float64Array(nw), r0: new Int32Array(nw), r1: new Int32Array(nw) };
  let a = 0, b = 0;
  for (let w = 0; w < nw; w++) {
    const ws = t0 + w * hop, we = ws + windowS;
    while (a < rows.n && rows.t[a]! < ws) a++;
    if (b < a) b = a;
    while (b < rows.n && rows.t[b]! < we) b++;
    out.t[w] = ws + windowS / 2;
    out.r0[w] = a;
    out.r1[w] = b;
  }
  return out;
}

function accelStdOf(rows: AlignmentRows, r0: number, r1: number): number {
  let s = 0, ss = 0;
  const m = r1 - r0;
  for (let r = r0; r < r1; r++) {
    const k = -0.5 / rows.beta[r]!; // λ / (½(Δt_ab + Δt_bc)) is the mean odometry acceleration
    for (let i = 0; i < 3; i++) {
      const a = rows.lam[3 * r + i]! * k;
      s += a;
      ss += a * a;
    }
  }
  return m > 0 ? Math.sqrt(Math.max(0, ss / (3 * m) - (s / (3 * m)) ** 2) * 3) : 0;
}

/** See the module comment. `worldGravityAligned` enables the tilt estimates. */
export function estimateGravityScale(rows: AlignmentRows, worldGravityAligned: boolean, options: GravityScaleOptions = {}): GravityScaleResult | Unsupported {
  const G = options.gravityMS2 ?? 9.80665;
  if (rows.n < 8) return { ok: false, reason: 'insufficient: fewer than 8 keyframe triplets' };
  const win = windowRanges(rows, options.windowS ?? 10, options.windowOverlap ?? 0.5);
  const nw = win.t.length;
  const minStd = options.minAccelStd ?? 0.1, maxSig = options.maxScaleSigma ?? 0.004;
  const zero = new Float64Array(3);
  const down = Float64Array.of(0, 0, -1);
  const inflate = Math.sqrt(rows.overlap);
  const perWindow = (baOf: (w: number) => Float64Array, scaleOnly: boolean): (SolveResult | null)[] => {
    const out: (SolveResult | null)[] = [];
    for (let w = 0; w < nw; w++) {
      const ba = baOf(w);
      const r0 = win.r0[w]!, r1 = win.r1[w]!;
      if (r1 - r0 < 6) {
        out.push(null);
        continue;
      }
      const lin = linearStart(rows, r0, r1, ba);
      const gn = lin ? Math.hypot(lin.g[0]!, lin.g[1]!, lin.g[2]!) : 0;
      const g0 = lin && gn > 1 ? Float64Array.of(lin.g[0]! / gn, lin.g[1]! / gn, lin.g[2]! / gn) : down;
      const s0 = lin && lin.s > 0 ? lin.s : 1;
      const r = solveAlignment(rows, r0, r1, { scale: 'free', bias: ba, gravityMS2: G, g0, s0, scaleOnly });
      // Overlapping triplets share keyframes: inflate the LS sigmas by √(rows per independent triplet).
      if (r !== null) {
        r.sSigma *= inflate;
        for (let k = 0; k < 4; k++) r.gCov[k] = r.gCov[k]! * inflate * inflate;
      }
      out.push(r);
    }
    return out;
  };
  const accelStd = Float64Array.from({ length: nw }, (_, w) => accelStdOf(rows, win.r0[w]!, win.r1[w]!));
  // Odometry accelerations are in odometry units: the window's scale makes them metric (monocular odometry), but a
  // scale that is not a sensible number cannot vouch for excitation, so the unit value is used then.
  const metricStd = (w: number, r: SolveResult): number => accelStd[w]! * (r.s > 0 && r.s < 1e3 ? r.s : 1);
  const observable = (w: number, r: SolveResult | null): string => {
    if (r === null) return 'insufficient: too few keyframe triplets in the window';
    if (metricStd(w, r) < minStd) return `unobservable: no acceleration excitation (odometry acceleration std ${metricStd(w, r).toFixed(3)} < ${minStd} m/s²)`;
    if (!(r.s > 0) || r.sSigma / r.s > maxSig) return `unobservable: scale sigma ${(r.sSigma / Math.abs(r.s) * 100).toFixed(1)} % above ${maxSig * 100} %`;
    return '';
  };
  // Pass 1: scales with zero bias, to hold scale fixed while the run-level bias is estimated (only the scales are read).
  const first = perWindow(() => zero, true);
  const s0 = Float64Array.from(first, (r) => (r !== null ? r.s : Number.NaN));
  // Pass 1 runs without the bias, whose error inflates σ_s: decide on excitation alone here.
  const anyObservable = first.some((r, w) => r !== null && metricStd(w, r) >= minStd);
  const seg = biasSegments(win.t, options.biasSegmentS ?? 600, options.accelBiasRandomWalk ?? DEFAULT_ACCEL_BIAS_RANDOM_WALK);
  const joint = runLevel(rows, win, s0, G, options.estimateBias ?? true, anyObservable, seg);
  const segBias = joint?.bias ?? null;
  const baOf = (w: number): Float64Array => (segBias === null ? zero : segBias.subarray(3 * seg.ofWindow[w]!, 3 * seg.ofWindow[w]! + 3));
  const second = perWindow(baOf, false);
  const scale = emptySeries('', nw), tilt = emptySeries('deg', nw), residual = emptySeries('m/s', nw);
  const condition = new Float64Array(nw).fill(Number.NaN);
  for (let w = 0; w < nw; w++) {
    const r = second[w]!;
    scale.t[w] = tilt.t[w] = residual.t[w] = win.t[w]!;
    const why = observable(w, r);
    if (r !== null) {
      residual.value[w] = r.rms;
      condition[w] = r.condition;
      if (worldGravityAligned) {
        tilt.value[w] = tiltDeg(r.g);
        tilt.sigma[w] = (Math.sqrt(0.5 * (r.gCov[0]! + r.gCov[3]!)) / G) * DEG;
      } else tilt.reasons[w] = 'not applicable: odometry world not claimed gravity-aligned';
    } else residual.reasons[w] = tilt.reasons[w] = why;
    if (why === '') {
      scale.value[w] = r!.s;
      scale.sigma[w] = r!.sSigma;
    } else scale.reasons[w] = why;
  }
  return {
    ok: true, scale, tiltDeg: tilt, residual, condition, accelStd,
    distance: Float64Array.from(win.t, (t) => distanceAt(rows, t)),
    runScale: runScaleOf(scale),
    gravity: joint?.g ?? Float64Array.of(0, 0, -G),
    gravityTiltDeg: !worldGravityAligned
      ? noScalar('deg', 'not applicable: odometry world not claimed gravity-aligned')
      : joint === null ? noScalar('deg', 'unobservable: no window with acceleration excitation') : scalar(tiltDeg(joint.g), joint.tiltSigmaDeg, 'deg'),
    accelBias: joint?.biasResult ?? { value: null, sigma: null, unit: 'm/s²', reason: 'unobservable: no window with acceleration excitation' },
    rowScale: scalePerRow(rows, win, scale.value),
    rowBias: biasPerRow(rows, win, baOf),
    rawScale: {
      t: win.t,
      value: Float64Array.from(second, (r, w) => (r !== null && metricStd(w, r) >= minStd ? r.s : Number.NaN)),
      sigma: Float64Array.from(second, (r) => (r !== null ? r.sSigma : Number.NaN)),
    },
  };
}

function distanceAt(rows: AlignmentRows, t: number): number {
  let lo = 0, hi = rows.n - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (rows.t[mid]! <= t) lo = mid;
    else hi = mid - 1;
  }
  return rows.distance[lo]!;
}

/** Each row takes the scale of the window whose centre is nearest. */
function scalePerRow(rows: AlignmentRows, win: { t: Float64Array }, s: ArrayLike<number>): Float64Array {
  const out = new Float64Array(rows.n);
  let w = 0;
  for (let r = 0; r < rows.n; r++) {
    while (w + 1 < win.t.length && Math.abs(win.t[w + 1]! - rows.t[r]!) <= Math.abs(win.t[w]! - rows.t[r]!)) w++;
    out[r] = s[w]!;
  }
  return out;
}

/** Each row takes the bias of the segment of the window whose centre is nearest. */
function biasPerRow(rows: AlignmentRows, win: { t: Float64Array }, baOf: (w: number) => Float64Array): Float64Array {
  const out = new Float64Array(3 * rows.n);
  let w = 0;
  for (let r = 0; r < rows.n; r++) {
    while (w + 1 < win.t.length && Math.abs(win.t[w + 1]! - rows.t[r]!) <= Math.abs(win.t[w]! - rows.t[r]!)) w++;
    out.set(baOf(w), 3 * r);
  }
  return out;
}

/**
 * Equal segments of whole windows, about `lengthS` long (one when the run is shorter than 1.5 segments). The mean
 * biases of two adjacent segments of length T under a random walk of density q differ with variance q²·2T/3, the
 * prior information between them.
 */
function biasSegments(centres: Float64Array, lengthS: number, q: number): BiasSegments {
  const nw = centres.length, t0 = centres[0]!, span = Math.max(0, centres[nw - 1]! - t0);
  const count = Math.max(1, Math.round(span / lengthS));
  const T = span / count;
  const ofWindow = Int32Array.from(centres, (t) => Math.min(count - 1, Math.floor((t - t0) / T)));
  return { ofWindow, count, stepInfo: new Float64Array(Math.max(0, count - 1)).fill(1 / (q * q * ((2 * T) / 3))) };
}

interface Joint {
  g: Float64Array;
  tiltSigmaDeg: number;
  bias: Float64Array | null;
  biasResult: Vec3Result;
}

/** Run-level gravity and segment biases, jointly with one free scale per window (alignment-joint.ts). */
function runLevel(rows: AlignmentRows, win: { t: Float64Array }, s0: Float64Array, G: number, withBias: boolean, anyObservable: boolean, seg: BiasSegments): Joint | null {
  if (!anyObservable) return null;
  const rowWindow = new Int32Array(rows.n);
  let w = 0;
  for (let r = 0; r < rows.n; r++) {
    while (w + 1 < win.t.length && Math.abs(win.t[w + 1]! - rows.t[r]!) <= Math.abs(win.t[w]! - rows.t[r]!)) w++;
    rowWindow[r] = w;
  }
  const withB = withBias ? solveJoint(rows, rowWindow, s0, G, true, seg) : null;
  const biasOk = withB !== null && Math.max(...withB.baSigma) < 0.05;
  const r = biasOk ? withB : solveJoint(rows, rowWindow, s0, G, false, seg);
  if (r === null) return null;
  const tiltSigmaDeg = (Math.sqrt(0.5 * (r.gCov[0]! + r.gCov[3]!)) / G) * DEG;
  const biasResult: Vec3Result = biasOk
    ? { value: [r.baMean[0]!, r.baMean[1]!, r.baMean[2]!], sigma: [r.baMeanSigma[0]!, r.baMeanSigma[1]!, r.baMeanSigma[2]!], unit: 'm/s²' }
    : { value: null, sigma: null, unit: 'm/s²', reason: withBias ? 'unobservable: too little heading change to separate bias from tilt' : 'not estimated' };
  return { g: r.g, tiltSigmaDeg, bias: biasOk ? r.ba : null, biasResult };
}

/** Median of the observable window scales; σ from the MAD over √(n/2) (windows overlap by half). */
function runScaleOf(s: WindowSeries): ScalarResult {
  const vals: number[] = [];
  for (let w = 0; w < s.value.length; w++) if (Number.isFinite(s.value[w]!)) vals.push(s.value[w]!);
  if (vals.length === 0) return noScalar('', s.reasons.find((r) => r.startsWith('unobservable')) ?? 'unobservable: no window with acceleration excitation');
  const sigma = vals.length >= 3 ? (1.2533 * madSigma(vals)) / Math.sqrt(Math.max(1, vals.length / 2)) : null;
  return scalar(medianOf(vals), sigma, '');
}
