import type { GnssColumns, OdometryColumns } from '@plumbline/bundle';
import type { PolicyThresholds, RunManifest } from '@plumbline/contracts';
import { geodesy, pose, PoseInterpolator, quat, type UmeyamaOptions } from '@plumbline/geometry';
import type { InertialFinding } from '../estimators/types.ts';
import { gateFixes, type FixGating } from './fix-gating.ts';
import { robustAlign, type Alignment } from './robust-align.ts';
import { gnssScaleFindings } from './gnss-scale.ts';
import type { FixTrack } from './fix-track.ts';

export type { FixTrack } from './fix-track.ts';

export interface GnssComparison {
  ok: true;
  origin: { latDeg: number; lonDeg: number; hM: number };
  gating: FixGating;
  /** ENU of every fix (NaN where coordinates are absent), for plots. */
  allE: Float64Array;
  allN: Float64Array;
  allU: Float64Array;
  track: FixTrack;
  /** Whole-run robust alignment odometry world → ENU. */
  global: Alignment;
  /** Whether the alignment estimated the scale (monocular odometry) or held it at 1. */
  scaleFree: boolean;
  /**
   * Per good fix: horizontal residual against the local baseline (see localDeviation) and vertical residual after
   * the windowed alignment, metres.
   */
  errH: Float64Array;
  errV: Float64Array;
  /** Horizontal RMS residual after the whole-run alignment, metres. */
  rmseH: number;
  /** Heading of each window's alignment relative to the whole-run one: drift of odometry heading, degrees. */
  windowT: Float64Array;
  windowHeadingDeg: Float64Array;
  findings: InertialFinding[];
}

export type GnssResult = GnssComparison | { ok: false; reason: string; gating: FixGating | null };

/** Antenna phase centre in the odometry body frame: imu_T_odom⁻¹ applied to the antenna position in the IMU frame. */
function antennaInOdomBody(m: RunManifest): Float64Array {
  const a = m.gnss?.antenna_in_imu ?? [0, 0, 0];
  const { translation: t, rotation_wxyz: q } = m.extrinsics.imu_T_odom;
  const imuTOdom = pose.fromValues(pose.create(), q[0], q[1], q[2], q[3], t[0], t[1], t[2]);
  const odomTImu = pose.invert(pose.create(), imuTOdom);
  return pose.transformPoint(new Float64Array(3), odomTImu, Float64Array.of(a[0], a[1], a[2]));
}

/** Builds the fix track: good fixes inside the odometry span, ENU at the first good fix, and odometry antenna positions. */
export function buildFixTrack(
  gnss: GnssColumns, good: Uint8Array, odometry: OdometryColumns, antennaBody: Float64Array,
): { origin: GnssComparison['origin']; track: FixTrack; allE: Float64Array; allN: Float64Array; allU: Float64Array } | null {
  let first = -1;
  for (let i = 0; i < gnss.n; i++) if (good[i]) { first = i; break; }
  if (first < 0) return null;
  const origin = { latDeg: gnss.lat[first]!, lonDeg: gnss.lon[first]!, hM: gnss.alt[first]! };
  const enuOrigin = geodesy.createEnuOrigin(origin.latDeg, origin.lonDeg, origin.hM);
  const allE = new Float64Array(gnss.n), allN = new Float64Array(gnss.n), allU = new Float64Array(gnss.n);
  geodesy.geodeticToEnu(allE, allN, allU, gnss.lat, gnss.lon, gnss.alt, enuOrigin);
  const interp = new PoseInterpolator(odometry);
  const p = pose.create(), w = new Float64Array(3);
  const cap = gnss.n, col = () => new Float64Array(cap);
  const full: FixTrack = { t: col(), e: col(), n: col(), u: col(), hacc: col(), fix: col(), ox: col(), oy: col(), oz: col() };
  let k = 0;
  for (let i = 0; i < gnss.n; i++) {
    if (!good[i] || !interp.at(p, gnss.t[i]!)) continue;
    quat.rotateVec3(w, p.q, antennaBody);
    full.t[k] = gnss.t[i]!;
    full.e[k] = allE[i]!;
    full.n[k] = allN[i]!;
    full.u[k] = allU[i]!;
    full.hacc[k] = gnss.hacc[i]!;
    full.fix[k] = gnss.fix[i]!;
    full.ox[k] = p.t[0]! + w[0]!;
    full.oy[k] = p.t[1]! + w[1]!;
    full.oz[k] = p.t[2]! + w[2]!;
    k++;
  }
  const track: FixTrack = {
    t: full.t.subarray(0, k), e: full.e.subarray(0, k), n: full.n.subarray(0, k), u: full.u.subarray(0, k),
    hacc: full.hacc.subarray(0, k), fix: full.fix.subarray(0, k), ox: full.ox.subarray(0, k), oy: full.oy.subarray(0, k), oz: full.oz.subarray(0, k),
  };
  return { origin, track, allE, allN, allU };
}

/**
 * Compares odometry with GNSS: gates fixes, converts them to ENU at the first good fix (WGS-84, geometry geodesy),
 * moves the odometry to the antenna (lever arm from the manifest rotated by the body attitude), aligns odometry to
 * ENU robustly (Umeyama 1991 in IRLS with a Huber kernel; yaw-only for gravity-aligned odometry, scale free only
 * for monocular odometry) over the whole run, and reports `gnss-divergence` findings where the residual departs from
 * its running median by at least the policy warning level for a few seconds. Sliding-window alignments give the
 * heading offset per window (odometry heading drift) and vertical residuals. Units metres, times epoch seconds.
 */
export function compareWithGnss(
  manifest: RunManifest, odometry: OdometryColumns, gnss: GnssColumns, th: PolicyThresholds,
): GnssResult {
  if (odometry.n < 2) return { ok: false, reason: 'insufficient: fewer than two odometry poses', gating: null };
  const gating = gateFixes(
    gnss,
    { minFixQuality: th.gnss_min_fix_quality, maxHaccM: th.gnss_max_hacc_m, maxHdop: th.gnss_max_hdop, outageS: th.gnss_outage_s },
    odometry.t[0]!, odometry.t[odometry.n - 1]!,
  );
  const built = buildFixTrack(gnss, gating.good, odometry, antennaInOdomBody(manifest));
  if (!built || built.track.t.length < 10) return { ok: false, reason: 'insufficient: fewer than 10 good fixes during the run', gating };
  const { track } = built;
  const opts: UmeyamaOptions = { yawOnly: manifest.odometry.world_gravity_aligned, fixScale: !manifest.odometry.monocular };
  const global = robustAlign(track, 0, track.t.length, opts, 1);
  if (!global) return { ok: false, reason: 'unobservable: GNSS track too short or straight to align odometry', gating };
  const k = track.t.length;
  let ss = 0;
  for (let j = 0; j < k; j++) ss += global.resH[j]! ** 2;
  const rmseH = Math.sqrt(ss / k);
  const local = windowedResiduals(track, opts, global.scale, Math.max(120, 12 * th.window_s));
  const dev = localDeviation(track.t, global.resE, global.resN, BASELINE_HALF_S);
  const findings = divergenceFindings(track, global, th['gnss-divergence'].warn ?? Number.POSITIVE_INFINITY);
  // Monocular odometry: its scale, free in the alignment, is checked along the path (steps, drift).
  if (manifest.odometry.monocular) findings.push(...gnssScaleFindings(track, odometry, antennaInOdomBody(manifest), global.scale));
  return { ok: true, origin: built.origin, gating, allE: built.allE, allN: built.allN, allU: built.allU, track, global, scaleFree: manifest.odometry.monocular, errH: dev, errV: local.errV, rmseH, windowT: local.windowT, windowHeadingDeg: local.headingDeg, findings };
}

/**
 * Sliding-window alignment (window `winS` s, step winS/4, scale fixed to the whole-run scale): every fix takes
 * the residual of the window whose centre is nearest, so slow odometry drift is absorbed and local disagreement
 * stands out.
 */
function windowedResiduals(track: FixTrack, opts: UmeyamaOptions, scale: number, winS: number) {
  const k = track.t.length, t0 = track.t[0]!, t1 = track.t[k - 1]!;
  const errH = new Float64Array(k).fill(Number.NaN), errV = new Float64Array(k).fill(Number.NaN);
  const bestDist = new Float64Array(k).fill(Number.POSITIVE_INFINITY);
  const scaled: FixTrack = { ...track, ox: track.ox.map((v) => v * scale), oy: track.oy.map((v) => v * scale), oz: track.oz.map((v) => v * scale) };
  const step = winS / 4, windowT: number[] = [], headingDeg: number[] = [];
  let lo = 0;
  for (let ws = t0; ws <= Math.max(t0, t1 - winS) + 1e-9; ws += step) {
    while (lo < k && track.t[lo]! < ws) lo++;
    let hi = lo;
    while (hi < k && track.t[hi]! < ws + winS) hi++;
    if (hi - lo < 10) continue;
    const a = robustAlign(scaled, lo, hi, { ...opts, fixScale: true }, 1);
    if (!a) continue;
    const centre = ws + winS / 2;
    windowT.push(centre);
    headingDeg.push((Math.atan2(a.r[3]!, a.r[0]!) * 180) / Math.PI);
    for (let j = lo; j < hi; j++) {
      const dist = Math.abs(track.t[j]! - centre);
      if (dist < bestDist[j]!) {
        bestDist[j] = dist;
        errH[j] = a.resH[j - lo]!;
        errV[j] = a.resV[j - lo]!;
      }
    }
  }
  return { errH, errV, windowT: Float64Array.from(windowT), headingDeg: Float64Array.from(headingDeg) };
}

/** Half-width of the running-median baseline of the residuals, seconds (divergences up to ~75 s stand out). */
const BASELINE_HALF_S = 75;

/**
 * Deviation of each fix's horizontal residual vector from its running median over ±halfS (per component, sampled
 * once a second). Odometry drift bends the residual slowly and stays near the median; a GNSS disagreement appears
 * as a step that lasts less than half the window and stands out in full. O(n + s·w log w) for s seconds of run.
 */
function localDeviation(t: Float64Array, re: Float64Array, rn: Float64Array, halfS: number): Float64Array {
  const k = t.length, out = new Float64Array(k);
  if (k === 0) return out;
  const t0 = t[0]!, nSec = Math.floor(t[k - 1]! - t0) + 1;
  // One residual per second (the first fix of each second) keeps the medians cheap.
  const secE = new Float64Array(nSec).fill(Number.NaN), secN = new Float64Array(nSec).fill(Number.NaN);
  for (let j = 0; j < k; j++) {
    const s = Math.floor(t[j]! - t0);
    if (Number.isNaN(secE[s]!)) {
      secE[s] = re[j]!;
      secN[s] = rn[j]!;
    }
  }
  const medE = new Float64Array(nSec), medN = new Float64Array(nSec), bufE: number[] = [], bufN: number[] = [];
  const h = Math.round(halfS);
  for (let s = 0; s < nSec; s++) {
    bufE.length = 0;
    bufN.length = 0;
    for (let q = Math.max(0, s - h); q <= Math.min(nSec - 1, s + h); q++) {
      if (Number.isNaN(secE[q]!)) continue;
      bufE.push(secE[q]!);
      bufN.push(secN[q]!);
    }
    bufE.sort((a, b) => a - b);
    bufN.sort((a, b) => a - b);
    medE[s] = bufE.length ? bufE[bufE.length >> 1]! : 0;
    medN[s] = bufN.length ? bufN[bufN.length >> 1]! : 0;
  }
  for (let j = 0; j < k; j++) {
    const s = Math.min(nSec - 1, Math.floor(t[j]! - t0));
    out[j] = Math.hypot(re[j]! - medE[s]!, rn[j]! - medN[s]!);
  }
  return out;
}

/** Multipath episodes last a few seconds; a disagreement must persist longer to count (common practice). */
const MIN_DIVERGENCE_S = 4;
/** Consecutive fixes further apart than this do not define a step (an outage in between), seconds. */
const MAX_STEP_GAP_S = 1.5;

/**
 * Divergences as steps in the residual: a GNSS disagreement (bias, wrong fix) starts abruptly, while odometry drift
 * bends the residual slowly. A jump of at least ¾ of the warning level between consecutive good fixes of the same
 * solution type (a change of type, e.g. RTK to single under multipath, explains a step by itself), both with a stated
 * accuracy below half that level when they state one, opens a divergence; it closes at the first fix whose residual
 * is back within half the jump of the level before it, else at the last fix. Episodes shorter than MIN_DIVERGENCE_S
 * are dropped. Value = the jump, metres.
 */
function divergenceFindings(track: FixTrack, a: Alignment, level: number): InertialFinding[] {
  const t = track.t, k = t.length, minJump = 0.75 * level;
  const out: InertialFinding[] = [];
  for (let j = 1; j < k; j++) {
    if (t[j]! - t[j - 1]! > MAX_STEP_GAP_S || track.fix[j] !== track.fix[j - 1]) continue;
    const acc = Math.max(finiteOr(track.hacc[j]!, 0), finiteOr(track.hacc[j - 1]!, 0));
    if (acc >= level / 2) continue;
    const be = a.resE[j - 1]!, bn = a.resN[j - 1]!;
    const size = Math.hypot(a.resE[j]! - be, a.resN[j]! - bn);
    if (size < minJump || size < 2 * acc) continue;
    let end = j;
    while (end + 1 < k && Math.hypot(a.resE[end + 1]! - be, a.resN[end + 1]! - bn) >= 0.5 * size) end++;
    if (t[end]! - t[j]! >= MIN_DIVERGENCE_S) {
      out.push({ kind: 'gnss-divergence', tStart: t[j]!, tEnd: t[end]!, value: size, unit: 'm', detail: `${end - j + 1} fixes offset from the odometry by a step of ${size.toFixed(2)} m` });
    }
    j = end + 1; // continue after the episode, skipping the step back
  }
  return out;
}

function finiteOr(x: number, fallback: number): number {
  return Number.isFinite(x) ? x : fallback;
}
