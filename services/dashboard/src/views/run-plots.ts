import type { Flag, FlagKind, Report, Series } from '@plumbline/contracts';
import { createTimePlot } from '../charts/time-plot.ts';
import type { TimeCursor } from '../charts/cursor.ts';
import { isRunWide } from '../charts/map-data.ts';

/** Known series, in display order, with the flag kinds they are evidence for. Unknown series follow, A–Z. */
const KNOWN: { key: string; label: string; kinds: FlagKind[] }[] = [
  { key: 'scale', label: 'Scale (odometry → metres)', kinds: ['scale-drift', 'loop-drift', 'unobservable'] },
  { key: 'gravity_tilt_deg', label: 'Gravity tilt', kinds: ['gravity-tilt'] },
  { key: 'rotation_residual_deg_s', label: 'Rotation residual (gyro vs odometry)', kinds: ['rotation-mismatch', 'extrinsic-rotation', 'units'] },
  { key: 'time_offset_ms', label: 'Time offset per window', kinds: ['time-offset'] },
  { key: 'gnss_error_m', label: 'GNSS error after alignment', kinds: ['gnss-divergence'] },
];

const IMU_KINDS: FlagKind[] = ['imu-gap', 'imu-saturation', 'units'];

function isSeries(v: unknown): v is Series {
  return typeof v === 'object' && v !== null && 'v' in v && 't' in v;
}

export function labelFor(key: string): string {
  const known = KNOWN.find((k) => k.key === key);
  if (known) return known.label;
  // imu_gyro_z_rad_s -> "IMU gyro z"; the unit is shown from the series itself.
  const words = key.replace(/_(rad_s|deg_s|m_s2|m|ms|deg|s|pct)$/, '').split('_');
  return words.map((w, i) => (w === 'imu' || w === 'gnss' ? w.toUpperCase() : i === 0 ? w[0]!.toUpperCase() + w.slice(1) : w)).join(' ');
}

/**
 * Plot order and the flags shaded on each: related kinds hatched with their id; series with no known kinds get all.
 * Run-wide findings are named in the caption instead of hatching the whole plot.
 */
export function plotPlan(report: Report): { key: string; label: string; series: Series; flags: Flag[]; runWide: Flag[] }[] {
  const entries = Object.entries(report.series).filter((e): e is [string, Series] => isSeries(e[1]));
  const rank = (k: string): number => {
    const i = KNOWN.findIndex((x) => x.key === k);
    return i >= 0 ? i : k.startsWith('imu') ? 100 : 50;
  };
  entries.sort((a, b) => rank(a[0]) - rank(b[0]) || a[0].localeCompare(b[0]));
  return entries.map(([key, series]) => {
    const kinds = KNOWN.find((k) => k.key === key)?.kinds ?? (key.startsWith('imu') ? IMU_KINDS : null);
    const related = kinds ? report.flags.filter((f) => kinds.includes(f.kind)) : [...report.flags];
    const wide = (f: Flag): boolean => isRunWide(f, report.run.duration_s);
    return { key, label: labelFor(key), series, flags: related.filter((f) => !wide(f)), runWide: related.filter(wide) };
  });
}

export function renderPlots(report: Report, cursor: TimeCursor): HTMLElement {
  const box = document.createElement('div');
  box.className = 'plots';
  const plan = plotPlan(report);
  if (plan.length === 0) {
    box.textContent = 'This report carries no time series.';
    return box;
  }
  for (const p of plan) {
    const note = p.runWide.length ? `whole run: ${p.runWide.map((f) => `${f.id} (${f.severity})`).join(', ')}` : undefined;
    box.append(createTimePlot({ name: p.key, label: p.label, note, series: p.series, flags: p.flags, durationS: report.run.duration_s, cursor, height: p.key.startsWith('imu') ? 90 : 110 }));
  }
  return box;
}
