import type { Flag, Path, Report } from '@plumbline/contracts';
import { indexAtTime } from './cursor.ts';

/** Bounding box [x0, y0, x1, y1] of the given paths (missing ones skipped); a unit box when all are empty. */
export function pathBounds(paths: readonly (Path | null | undefined)[]): [number, number, number, number] {
  let x0 = Infinity;
  let y0 = Infinity;
  let x1 = -Infinity;
  let y1 = -Infinity;
  for (const p of paths) {
    if (!p) continue;
    for (let i = 0; i < p.x.length; i++) {
      const x = p.x[i]!;
      const y = p.y[i]!;
      if (x < x0) x0 = x;
      if (x > x1) x1 = x;
      if (y < y0) y0 = y;
      if (y > y1) y1 = y;
    }
  }
  return Number.isFinite(x0) ? [x0, y0, x1, y1] : [-1, -1, 1, 1];
}

/** A flag that covers (nearly) the whole run is a run-level finding, not a place on the path or in time. */
export function isRunWide(f: Pick<Flag, 't_start' | 't_end'>, durationS: number): boolean {
  return durationS > 0 && f.t_end - f.t_start >= 0.9 * durationS;
}

/** A flagged stretch of path to draw: a segment of merged flags, or a flag that belongs to no segment. */
export interface Stretch {
  t_start: number;
  t_end: number;
  severity: Flag['severity'];
  label: string;
}

/**
 * Stretches for the map: segments (labelled with up to two flag ids), then warning/critical flags no segment covers.
 * Info notes and run-wide findings stay in the flag list; drawn on the path they would only hide it.
 */
export function mapStretches(report: Report): Stretch[] {
  const d = report.run.duration_s;
  const covered = new Set(report.segments.flatMap((s) => s.flag_ids));
  const ids = (list: readonly string[]): string => (list.length <= 2 ? list.join(', ') : `${list.slice(0, 2).join(', ')} +${list.length - 2}`);
  const out: Stretch[] = report.segments
    .filter((s) => s.severity !== 'info' && !isRunWide(s, d))
    .map((s) => ({ t_start: s.t_start, t_end: s.t_end, severity: s.severity, label: ids(s.flag_ids) }));
  for (const f of report.flags) {
    if (!covered.has(f.id) && f.severity !== 'info' && !isRunWide(f, d)) out.push({ t_start: f.t_start, t_end: f.t_end, severity: f.severity, label: f.id });
  }
  return out;
}

/** Planar rigid transform p = R(θ)·g + t. */
export interface Rigid2 {
  thetaRad: number;
  tx: number;
  ty: number;
  pairs: number;
}

/** One weighted-out rigid fit over the pairs whose `keep` flag is set. */
function fitRigid(g: Path, p: Path, idx: Int32Array, keep: Uint8Array): Rigid2 | null {
  let n = 0;
  let gmx = 0;
  let gmy = 0;
  let pmx = 0;
  let pmy = 0;
  for (let i = 0; i < idx.length; i++) {
    if (!keep[i]) continue;
    const k = idx[i]!;
    n++;
    gmx += g.x[i]!;
    gmy += g.y[i]!;
    pmx += p.x[k]!;
    pmy += p.y[k]!;
  }
  if (n < 3) return null;
  gmx /= n;
  gmy /= n;
  pmx /= n;
  pmy /= n;
  let dot = 0;
  let cross = 0;
  for (let i = 0; i < idx.length; i++) {
    if (!keep[i]) continue;
    const k = idx[i]!;
    const gx = g.x[i]! - gmx;
    const gy = g.y[i]! - gmy;
    const px = p.x[k]! - pmx;
    const py = p.y[k]! - pmy;
    dot += gx * px + gy * py;
    cross += gx * py - gy * px;
  }
  if (Math.abs(dot) + Math.abs(cross) < 1e-9) return null;
  const th = Math.atan2(cross, dot);
  const c = Math.cos(th);
  const s = Math.sin(th);
  return { thetaRad: th, tx: pmx - (c * gmx - s * gmy), ty: pmy - (s * gmx + c * gmy), pairs: n };
}

/**
 * Least-squares 2-D rotation + translation taking GNSS fixes onto the odometry path at the same times, so fixes
 * given in ENU can be drawn over a path in its own world frame. Closed form of the rigid case of Umeyama (IEEE TPAMI
 * 13(4), 1991): θ = atan2(Σ gx·py − gy·px, Σ gx·px + gy·py) over centred pairs. A second fit leaves out pairs whose
 * residual exceeds 3 × the median (common practice), so a diverging stretch does not tilt the whole overlay.
 * Display only — the analysis does its own alignment. Null with fewer than 3 usable fixes or no spread.
 */
export function alignForDisplay(gnss: Path & { fix: number[] }, path: Path): Rigid2 | null {
  const idx = new Int32Array(gnss.t.length);
  const keep = new Uint8Array(gnss.t.length);
  for (let i = 0; i < idx.length; i++) {
    idx[i] = gnss.fix[i]! > 0 ? indexAtTime(path.t, gnss.t[i]!) : -1;
    keep[i] = idx[i]! >= 0 ? 1 : 0;
  }
  const first = fitRigid(gnss, path, idx, keep);
  if (!first) return null;
  const c = Math.cos(first.thetaRad);
  const s = Math.sin(first.thetaRad);
  const res = new Float64Array(idx.length).fill(Number.NaN);
  for (let i = 0; i < idx.length; i++) {
    if (!keep[i]) continue;
    const k = idx[i]!;
    res[i] = Math.hypot(c * gnss.x[i]! - s * gnss.y[i]! + first.tx - path.x[k]!, s * gnss.x[i]! + c * gnss.y[i]! + first.ty - path.y[k]!);
  }
  const sorted = Array.from(res).filter((r) => !Number.isNaN(r)).sort((a, b) => a - b);
  const median = sorted[Math.floor(sorted.length / 2)] ?? 0;
  if (median <= 0) return first;
  for (let i = 0; i < idx.length; i++) if (keep[i] && res[i]! > 3 * median) keep[i] = 0;
  return fitRigid(gnss, path, idx, keep) ?? first;
}

/** Apply a planar rigid transform to a path (new arrays; z and t kept). */
export function transformPath<P extends Path>(p: P, r: Rigid2): P {
  const c = Math.cos(r.thetaRad);
  const s = Math.sin(r.thetaRad);
  const x = p.x.map((xi, i) => c * xi - s * p.y[i]! + r.tx);
  const y = p.y.map((yi, i) => s * p.x[i]! + c * yi + r.ty);
  return { ...p, x, y };
}
