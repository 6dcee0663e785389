/**
 * Scale of monocular odometry against GNSS: drift along the path and steps.
 *
 * What: the ratio of GNSS to odometry displacement between two fixes (metres per odometry unit). A rigid motion keeps
 * the distance between two points, so |ENU_b − ENU_a| / |odom_b − odom_a| is the scale between them whatever the
 * heading; with RTK fixes (cm noise) a few metres of displacement give the scale to a fraction of a percent, also
 * at constant velocity, where the inertial scale is unobservable.
 * Method: ratios at a coarse lag (10 s) detect steps (median before against median after, robust z with the
 * normal-consistent MAD, F. R. Hampel, JASA 69, 1974) and carry the trend (Theil–Sen slope against distance on
 * non-overlapping pairs with Sen's interval, JASA 63, 1968, per level between steps); ratios at a fine lag (2 s)
 * locate each step by the best L1 split between the two levels. Units: %, metres, epoch seconds.
 */
import type { OdometryColumns } from '@plumbline/bundle';
import { pose, PoseInterpolator, quat, robust, theilSen } from '@plumbline/geometry';
import type { InertialFinding } from '../estimators/types.ts';
import type { FixTrack } from './fix-track.ts';

export interface GnssScaleOptions {
  /** Coarse and fine lags between the two fixes of a ratio, s (default 10, 2). */
  coarseLagS?: number;
  fineLagS?: number;
  /** Half-width of the groups compared for a step, s (default 20). */
  stepGroupS?: number;
  /** Smallest step reported, % (default 2.5, above the scale wander of a good front end: common practice). */
  minStepPct?: number;
}

interface Ratios {
  t: Float64Array;
  r: Float64Array;
  /** Metric distance at the pair's middle (GNSS displacements summed), m. */
  d: Float64Array;
  n: number;
}

/** Ratios of fix pairs `lag` apart whose odometry displacement is at least minOdom (odometry units). */
function ratios(tr: FixTrack, lag: number, minOdom: number, stride: number): Ratios {
  const k = tr.t.length, t = new Float64Array(k), r = new Float64Array(k), d = new Float64Array(k);
  let n = 0, i = 0, dist = 0, distAtI = 0, last = -1;
  for (let j = 0; j < k; j++) {
    while (i < j && tr.t[i + 1]! <= tr.t[j]! - lag) {
      distAtI += Math.hypot(tr.e[i + 1]! - tr.e[i]!, tr.n[i + 1]! - tr.n[i]!, tr.u[i + 1]! - tr.u[i]!);
      i++;
    }
    if (j > 0) dist += Math.hypot(tr.e[j]! - tr.e[j - 1]!, tr.n[j]! - tr.n[j - 1]!, tr.u[j]! - tr.u[j - 1]!);
    const dt = tr.t[j]! - tr.t[i]!;
    if (Math.abs(dt - lag) > 0.5 || (last >= 0 && tr.t[j]! - last < stride - 1e-9)) continue;
    const od = Math.hypot(tr.ox[j]! - tr.ox[i]!, tr.oy[j]! - tr.oy[i]!, tr.oz[j]! - tr.oz[i]!);
    if (!(od >= minOdom)) continue;
    t[n] = 0.5 * (tr.t[i]! + tr.t[j]!);
    r[n] = Math.hypot(tr.e[j]! - tr.e[i]!, tr.n[j]! - tr.n[i]!, tr.u[j]! - tr.u[i]!) / od;
    d[n] = 0.5 * (distAtI + dist);
    last = tr.t[j]!;
    n++;
  }
  return { t: t.subarray(0, n), r: r.subarray(0, n), d: d.subarray(0, n), n };
}

interface Step {
  t: number;
  sigmaS: number;
  before: number;
  after: number;
}

/** Ratios with both fixes on one side of time `at` within `span` s: median, robust σ and count of independent pairs. */
function group(c: Ratios, lag: number, from: number, to: number, buf: Float64Array): { med: number; se: number } | null {
  let m = 0;
  for (let q = 0; q < c.n; q++) if (c.t[q]! - lag / 2 >= from && c.t[q]! + lag / 2 <= to) buf[m++] = c.r[q]!;
  const independent = (to - from) / lag;
  if (m < 5 || independent < 1) return null;
  const st = robust.mad(buf.subarray(0, m));
  // Standard error of a median: 1.2533·σ/√n (asymptotic efficiency 2/π; normal tables), n = independent pairs.
  return { med: st.median, se: (1.2533 * Math.max(st.sigma, 1e-4 * st.median)) / Math.sqrt(independent) };
}

function findSteps(c: Ratios, fine: Ratios, lag: number, half: number, minPct: number): Step[] {
  if (c.n < 10) return [];
  const steps: Step[] = [], buf = new Float64Array(c.n);
  const t0 = c.t[0]!, t1 = c.t[c.n - 1]!;
  for (let pass = 0; pass < 20; pass++) {
    let best: { t: number; z: number; before: number; after: number } | null = null;
    for (let at = Math.ceil(t0); at <= t1; at += 1) {
      if (steps.some((s) => Math.abs(s.t - at) < half)) continue;
      const lo = Math.max(at - half, ...steps.filter((s) => s.t < at).map((s) => s.t));
      const hi = Math.min(at + half, ...steps.filter((s) => s.t > at).map((s) => s.t));
      const b = group(c, lag, lo, at, buf), a = group(c, lag, at, hi, buf);
      if (!b || !a) continue;
      const z = Math.abs(a.med - b.med) / Math.hypot(a.se, b.se);
      if (z > 8 && Math.abs(a.med / b.med - 1) * 100 >= minPct && (!best || z > best.z)) best = { t: at, z, before: b.med, after: a.med };
    }
    if (!best) break;
    steps.push({ ...locate(fine, best.t - lag, best.t + lag, best.before, best.after), before: best.before, after: best.after });
  }
  return steps.sort((x, y) => x.t - y.t);
}

/** Best L1 split of the fine ratios in [from, to] between the two levels; σ from the splits within one MAD of cost. */
function locate(f: Ratios, from: number, to: number, before: number, after: number): { t: number; sigmaS: number } {
  let q0 = 0;
  while (q0 < f.n && f.t[q0]! < from) q0++;
  let q1 = q0;
  while (q1 < f.n && f.t[q1]! <= to) q1++;
  if (q1 - q0 < 3) return { t: 0.5 * (from + to), sigmaS: (to - from) / Math.sqrt(12) };
  // cost(m) = Σ_{q<m}|r−before| + Σ_{q≥m}|r−after|, updated in O(1) per split.
  let cost = 0;
  for (let q = q0; q < q1; q++) cost += Math.abs(f.r[q]! - after);
  const costs = new Float64Array(q1 - q0 + 1);
  costs[0] = cost;
  for (let q = q0; q < q1; q++) {
    cost += Math.abs(f.r[q]! - before) - Math.abs(f.r[q]! - after);
    costs[q - q0 + 1] = cost;
  }
  let m = 0;
  for (let k = 1; k < costs.length; k++) if (costs[k]! < costs[m]!) m = k;
  const at = (k: number) => (k <= 0 ? f.t[q0]! : k >= q1 - q0 ? f.t[q1 - 1]! : 0.5 * (f.t[q0 + k - 1]! + f.t[q0 + k]!));
  const tol = Math.abs(after - before) / 2;
  let lo = m, hi = m;
  while (lo > 0 && costs[lo - 1]! - costs[m]! < tol) lo--;
  while (hi < costs.length - 1 && costs[hi + 1]! - costs[m]! < tol) hi++;
  return { t: at(m), sigmaS: Math.max(0.5 * (at(hi) - at(lo)), 0.1) };
}

/** Theil–Sen trend of the coarse ratios, each divided by the median of its level (between steps). */
function trend(c: Ratios, lag: number, steps: Step[]): { pct: number; lo: number; hi: number; from: number; to: number; lengthM: number } | null {
  const xs: number[] = [], ys: number[] = [];
  let lastT = Number.NEGATIVE_INFINITY;
  const level = (t: number) => steps.filter((s) => s.t <= t).length;
  const meds: number[] = [];
  for (let L = 0; L <= steps.length; L++) {
    const vals: number[] = [];
    for (let q = 0; q < c.n; q++) if (level(c.t[q]!) === L) vals.push(c.r[q]!);
    meds.push(vals.length ? robust.median(vals) : Number.NaN);
  }
  for (let q = 0; q < c.n; q++) {
    if (c.t[q]! - lastT < lag) continue; // non-overlapping pairs: Sen's interval assumes independent points
    if (steps.some((s) => Math.abs(c.t[q]! - s.t) < lag / 2)) continue;
    lastT = c.t[q]!;
    xs.push(c.d[q]! / 100);
    ys.push((c.r[q]! / meds[level(c.t[q]!)]! - 1) * 100);
  }
  if (xs.length < 6) return null;
  const ts = theilSen(Float64Array.from(xs), Float64Array.from(ys));
  if (!ts.ok) return null;
  return { pct: ts.slope, lo: ts.slopeLow, hi: ts.slopeHigh, from: c.t[0]! - lag / 2, to: c.t[c.n - 1]! + lag / 2, lengthM: 100 * (xs[xs.length - 1]! - xs[0]!) };
}

/**
 * The fix track with the odometry antenna positions rebuilt with the lever arm in odometry units (metres / scale):
 * the track's lever arm is in metres, which a scale ≠ 1 would turn into a heading-dependent distance error.
 */
function antennaInOdomUnits(tr: FixTrack, odometry: OdometryColumns, antennaBodyM: Float64Array, scale: number): FixTrack {
  const interp = new PoseInterpolator(odometry), p = pose.create(), w = new Float64Array(3);
  const lever = antennaBodyM.map((v) => v / scale);
  const ox = new Float64Array(tr.t.length), oy = new Float64Array(tr.t.length), oz = new Float64Array(tr.t.length);
  for (let j = 0; j < tr.t.length; j++) {
    if (!interp.at(p, tr.t[j]!)) {
      ox[j] = oy[j] = oz[j] = Number.NaN;
      continue;
    }
    quat.rotateVec3(w, p.q, lever);
    ox[j] = p.t[0]! + w[0]!;
    oy[j] = p.t[1]! + w[1]!;
    oz[j] = p.t[2]! + w[2]!;
  }
  return { ...tr, ox, oy, oz };
}

/**
 * Scale-drift findings of monocular odometry from GNSS (see the module comment): one per step (value = step, %) and
 * one for a significant trend (95 % interval excluding zero; value = scale change over the run's path, %).
 * `globalScale` (metres per odometry unit) sets the least odometry displacement of a ratio (4 m / 1 m coarse / fine).
 */
export function gnssScaleFindings(
  fixes: FixTrack, odometry: OdometryColumns, antennaBodyM: Float64Array, globalScale: number, options: GnssScaleOptions = {},
): InertialFinding[] {
  const lag = options.coarseLagS ?? 10, fineLag = options.fineLagS ?? 2, half = options.stepGroupS ?? 20;
  if (!(globalScale > 0)) return [];
  const track = antennaInOdomUnits(fixes, odometry, antennaBodyM, globalScale);
  const coarse = ratios(track, lag, 4 / globalScale, 0);
  const fine = ratios(track, fineLag, 1 / globalScale, 0);
  const steps = findSteps(coarse, fine, lag, half, options.minStepPct ?? 2.5);
  const out: InertialFinding[] = steps.map((s) => ({
    kind: 'scale-drift', tStart: s.t - s.sigmaS, tEnd: s.t + s.sigmaS, value: (s.after / s.before - 1) * 100, unit: '%',
    detail: `scale step against GNSS at ${s.t.toFixed(2)} ± ${s.sigmaS.toFixed(2)} s: ${s.before.toFixed(4)} → ${s.after.toFixed(4)} m per odometry unit`,
  }));
  const tr = trend(coarse, lag, steps);
  if (tr && (tr.lo > 0 || tr.hi < 0)) {
    const total = (tr.pct * tr.lengthM) / 100;
    out.push({
      kind: 'scale-drift', tStart: tr.from, tEnd: tr.to, value: total, unit: '%',
      detail: `scale against GNSS drifts ${tr.pct.toFixed(2)} %/100 m (95 % CI ${tr.lo.toFixed(2)} to ${tr.hi.toFixed(2)}) over ${tr.lengthM.toFixed(0)} m`,
    });
  }
  return out;
}
