import type { Report, StreamIntegrity } from '@plumbline/contracts';
import { h } from '../dom.ts';
import { fmtNum } from '../format.ts';

function rate(s: StreamIntegrity): string {
  const m = s.measured_rate_hz;
  const n = s.nominal_rate_hz;
  if (m === null && n === null) return '—';
  return `${fmtNum(m)} Hz${n !== null ? ` (nominal ${fmtNum(n)})` : ''}`;
}

function problems(s: StreamIntegrity): string {
  const out: string[] = [];
  if (s.gaps.length) out.push(`${s.gaps.length} gap${s.gaps.length > 1 ? 's' : ''}`);
  if (s.bad_lines) out.push(`${s.bad_lines} bad line${s.bad_lines > 1 ? 's' : ''}`);
  if (s.duplicate_timestamps) out.push(`${s.duplicate_timestamps} duplicate times`);
  if (s.non_monotonic_timestamps) out.push(`${s.non_monotonic_timestamps} times going back`);
  if (s.non_finite_values) out.push(`${s.non_finite_values} non-finite values`);
  return out.length ? `⚠ ${out.join(', ')}` : '✓ none';
}

/** Per-stream sample counts, rates and defects, plus saturation and the unit ratios, from the report's integrity block. */
export function renderIntegrity(report: Report): HTMLElement {
  const i = report.integrity;
  const streams: [string, StreamIntegrity | null][] = [['IMU', i.imu], ['Odometry', i.odometry], ['GNSS', i.gnss], ['Loops', i.loops]];
  const rows = streams
    .filter((e): e is [string, StreamIntegrity] => e[1] !== null)
    .map(([name, s]) => h('tr', {}, h('th', { scope: 'row' }, name, h('div', { class: 'muted small' }, s.file)), h('td', { class: 'num' }, String(s.samples)), h('td', {}, rate(s)), h('td', {}, problems(s))));
  const sat = i.saturation.reduce((n, x) => n + x.samples, 0);
  const u = i.units;
  return h(
    'section',
    { class: 'integrity card' },
    h('h2', {}, 'Data integrity'),
    h('table', { class: 'kv integrity-table' }, h('thead', {}, h('tr', {}, h('th', {}, 'Stream'), h('th', { class: 'num' }, 'Samples'), h('th', {}, 'Rate'), h('th', {}, 'Defects'))), h('tbody', {}, ...rows)),
    h(
      'p',
      { class: 'small' },
      sat ? `⚠ IMU saturation: ${sat} samples in ${i.saturation.length} interval${i.saturation.length > 1 ? 's' : ''}. ` : '✓ No IMU saturation. ',
      `Rest |f|/g = ${fmtNum(u.accel_rest_ratio)} (≈1 when in m/s²); gyro/odometry rate ratio = ${fmtNum(u.gyro_odometry_rate_ratio)} (≈1 when in rad/s).`,
    ),
  );
}
