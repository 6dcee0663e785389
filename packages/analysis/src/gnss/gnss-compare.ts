import type { GnssColumns, OdometryColumns } from '@plumbline/bundle';
import type { PolicyThresholds, RunManifest } from '@plumbline/contracts';
import { geodesy, pose, PoseInterpolator, quat, type UmeyamaOptions } from '@plumbline/geometry';
import type { InertialFinding } from '../estimators/types.ts';
import { gateFixes, type FixGating } from './fix-gating.ts';
import { robustAlign, type Alignment } from './robust-align.ts';
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
  /** Per good fix: horizontal and vertical residual after the local (windowed) alignment, metres. */
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
  const full: FixTrack = { t: col(), e: col(), n: col(), u: col(), hacc: col(), ox: col(), oy: col(), oz: col() };
  let k = 0;
  for (let i = 0; i < gnss.n; i++) {
    if (!good[i] || !interp.at(p, gnss.t[i]!)) continue;
    quat.rotateVec3(w, p.q, antennaBody);
    full.t[k] = gnss.t[i]!;
    full.e[k] = allE[i]!;
    full.n[k] = allN[i]!;
    full.u[k] = allU[i]!;
    full.hacc[k] = gnss.hacc[i]!;
    full.ox[k] = p.t[0]! + w[0]!;
    full.oy[k] = p.t[1]! + w[1]!;
    full.oz[k] = p.t[2]! + w[2]!;
    k++;
  }
  const track: FixTrack = {
    t: full.t.subarray(0, k), e: full.e.subarray(0, k), n: full.n.subarray(0, k), u: full.u.subarray(0, k),
    hacc: full.hacc.subarray(0, k), ox: full.ox.subarray(0, k), oy: full.oy.subarray(0, k), oz: full.oz.subarray(0, k),
  };
  return { origin, track, allE, allN, allU };
}

/**
 * Compares odometry with GNSS: gates fixes, converts them to ENU at the first good fix (WGS-84, geometry geodesy),
 * moves the odometry to the antenna (lever arm from the manifest rotated by the body attitude), aligns odometry to
 * ENU robustly (Umeyama 1991 in IRLS with a Huber kernel; yaw-only for gravity-aligned odometry, scale free only
 * for monocular odometry) over the whole run and over sliding windows, and reports `gnss-divergence` findings
 * where the windowed residual stays at or above the policy warning level. Units metres, times epoch seconds.
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
  const findings = divergenceFindings(track, local.errH, th['gnss-divergence'].warn ?? Number.POSITIVE_INFINITY);
  return { ok: true, origin: built.origin, gating, allE: built.allE, allN: built.allN, allU: built.allU, track, global, scaleFree: manifest.odometry.monocular, errH: local.errH, errV: local.errV, rmseH, windowT: local.windowT, windowHeadingDeg: local.headingDeg, findings };
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

/** Multipath episodes last a few seconds; a disagreement must persist longer to count (common practice). */
const MIN_DIVERGENCE_S = 4;

/**
 * Runs of fixes whose residual is at or above `level` and at least twice the fix's own stated 1-sigma accuracy
 * (gaps < 2 s bridged, lasting at least MIN_DIVERGENCE_S): value = median residual of the run.
 */
function divergenceFindings(track: FixTrack, errH: Float64Array, level: number): InertialFinding[] {
  const t = track.t;
  const out: InertialFinding[] = [];
  let start = -1, last = -1;
  const vals: number[] = [];
  const close = () => {
    if (start >= 0 && vals.length >= 3 && t[last]! - t[start]! >= MIN_DIVERGENCE_S) {
      vals.sort((x, y) => x - y);
      const med = vals[vals.length >> 1]!;
      out.push({ kind: 'gnss-divergence', tStart: t[start]!, tEnd: t[last]!, value: med, unit: 'm', detail: `${vals.length} fixes disagree with odometry` });
    }
    start = -1;
    vals.length = 0;
  };
  for (let j = 0; j < t.length; j++) {
    const e = errH[j]!, acc = track.hacc[j]!;
    if (!(e >= level) || (Number.isFinite(acc) && e < 2 * acc)) continue;
    if (start >= 0 && t[j]! - t[last]! > 2) close();
    if (start < 0) start = j;
    last = j;
    vals.push(e);
  }
  close();
  return out;
}
