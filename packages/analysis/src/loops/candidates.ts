import type { LoopColumns, OdometryColumns } from '@plumbline/bundle';
import type { LoopSource, PolicyThresholds, RunManifest } from '@plumbline/contracts';
import { pose, quat } from '@plumbline/geometry';
import type { GnssComparison } from '../gnss/gnss-compare.ts';
import { nearestIndex } from './path.ts';

/** A loop candidate: the pose of the body at index iB seen from the body at index iA (odometry units). */
export interface LoopCandidate {
  source: LoopSource;
  tA: number;
  tB: number;
  iA: number;
  iB: number;
  /** Measured relative pose (translation in odometry units). */
  meas: pose.Pose;
  /** 1-sigma translation (odometry units) and rotation (rad); rotation null = translation-only constraint. */
  sigmaT: number;
  sigmaR: number | null;
}

const DEG = Math.PI / 180;
/** Motion below this (odometry units) counts as standing still at the dock (common practice). */
const DOCK_REST = 0.05;

/** Candidates from loops.csv, time-stamped on the odometry clock; absent sigmas fall back to the dock knobs. */
export function robotLoops(loops: LoopColumns, odo: OdometryColumns, th: PolicyThresholds): LoopCandidate[] {
  const out: LoopCandidate[] = [];
  const t0 = odo.t[0]!, t1 = odo.t[odo.n - 1]!;
  for (let i = 0; i < loops.n; i++) {
    const tA = loops.tA[i]!, tB = loops.tB[i]!;
    if (!(tA >= t0 && tB <= t1 && tA !== tB)) continue;
    const meas = pose.fromValues(pose.create(), loops.qw[i]!, loops.qx[i]!, loops.qy[i]!, loops.qz[i]!, loops.x[i]!, loops.y[i]!, loops.z[i]!);
    const sT = loops.sigmaT[i]!, sR = loops.sigmaR[i]!;
    out.push({
      source: 'robot', tA, tB, iA: nearestIndex(odo.t, tA), iB: nearestIndex(odo.t, tB), meas,
      sigmaT: Number.isFinite(sT) && sT > 0 ? sT : th.dock_sigma_m,
      sigmaR: Number.isFinite(sR) && sR > 0 ? sR : th.dock_sigma_deg * DEG,
    });
  }
  return out;
}

/**
 * Dock return: a run that starts and ends at the dock gives one loop from the last pose of the initial rest to the
 * first pose of the final rest: the same place (zero relative translation, the policy's dock uncertainty). The
 * heading at the dock is not assumed to repeat, so the loop is translation-only.
 */
export function dockLoop(odo: OdometryColumns, dist: Float64Array, th: PolicyThresholds): LoopCandidate | null {
  const n = odo.n;
  if (n < 2) return null;
  const total = dist[n - 1]!;
  if (total < 10 * DOCK_REST) return null;
  let iA = 0;
  while (iA + 1 < n && dist[iA + 1]! < DOCK_REST) iA++;
  let iB = n - 1;
  while (iB - 1 > iA && total - dist[iB - 1]! < DOCK_REST) iB--;
  const meas = pose.identity(pose.create());
  return { source: 'dock', tA: odo.t[iA]!, tB: odo.t[iB]!, iA, iB, meas, sigmaT: th.dock_sigma_m, sigmaR: null };
}

/**
 * Revisits seen by GNSS: pairs of good fixes at least `revisit_min_gap_s` apart in time and at most
 * `revisit_max_distance_m` apart in ENU (grid hash over 1-second-thinned fixes, O(n) for bounded revisits).
 * Translation-only constraints: GNSS says nothing about orientation. The ENU offset is rotated into the body frame
 * at tA with the whole-run alignment and divided by its scale (odometry units).
 */
export function gnssRevisits(g: GnssComparison, odo: OdometryColumns, manifest: RunManifest, th: PolicyThresholds, max = 50): LoopCandidate[] {
  if (!manifest.odometry.world_gravity_aligned) return [];
  const { t, e, n: north, u } = g.track;
  const cell = th.revisit_max_distance_m;
  const grid = new Map<string, number[]>();
  const out: LoopCandidate[] = [];
  const pa = pose.create(), qInv = quat.create(), d = new Float64Array(3), w = new Float64Array(3);
  const r = g.global.r;
  let lastT = Number.NEGATIVE_INFINITY, lastB = Number.NEGATIVE_INFINITY;
  for (let j = 0; j < t.length && out.length < max; j++) {
    if (t[j]! - lastT < 1) continue;
    lastT = t[j]!;
    const cx = Math.floor(e[j]! / cell), cy = Math.floor(north[j]! / cell);
    let best = -1, bestD = cell;
    if (t[j]! - lastB >= 30) {
      for (let dx = -1; dx <= 1; dx++) for (let dy = -1; dy <= 1; dy++) {
        for (const a of grid.get(`${cx + dx},${cy + dy}`) ?? []) {
          if (t[j]! - t[a]! < th.revisit_min_gap_s) continue;
          const dd = Math.hypot(e[j]! - e[a]!, north[j]! - north[a]!);
          if (dd < bestD) [best, bestD] = [a, dd];
        }
      }
    }
    const key = `${cx},${cy}`;
    (grid.get(key) ?? grid.set(key, []).get(key)!).push(j);
    if (best < 0) continue;
    lastB = t[j]!;
    const iA = nearestIndex(odo.t, t[best]!), iB = nearestIndex(odo.t, t[j]!);
    pose.fromColumns(pa, odo, iA);
    // ENU offset → odometry world (Rᵀ/scale) → body frame at tA.
    const de = e[j]! - e[best]!, dn = north[j]! - north[best]!, du = u[j]! - u[best]!;
    for (let k = 0; k < 3; k++) w[k] = (r[k]! * de + r[3 + k]! * dn + r[6 + k]! * du) / g.global.scale;
    quat.conjugate(qInv, pa.q);
    quat.rotateVec3(d, qInv, w);
    const meas = pose.fromValues(pose.create(), 1, 0, 0, 0, d[0]!, d[1]!, d[2]!);
    out.push({ source: 'gnss-revisit', tA: t[best]!, tB: t[j]!, iA, iB, meas, sigmaT: Math.max(0.5, cell) / g.global.scale, sigmaR: null });
  }
  return out;
}

/** All candidates of a run, in time order of tB then tA (deterministic). */
export function collectLoopCandidates(
  manifest: RunManifest, odo: OdometryColumns, dist: Float64Array, loops: LoopColumns | null, gnss: GnssComparison | null, th: PolicyThresholds,
): LoopCandidate[] {
  const out: LoopCandidate[] = [];
  if (loops) out.push(...robotLoops(loops, odo, th));
  if (manifest.dock?.returns_to_start) {
    const dock = dockLoop(odo, dist, th);
    if (dock) out.push(dock);
  }
  if (gnss) out.push(...gnssRevisits(gnss, odo, manifest, th));
  return out.filter((c) => c.iA !== c.iB).sort((a, b) => a.tB - b.tB || a.tA - b.tA || a.source.localeCompare(b.source));
}
