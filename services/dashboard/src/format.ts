import type { FlagKind, RunDecision, ScalarEstimate, Severity, Verdict, Vec3Estimate } from '@plumbline/contracts';

/**
 * Presentation vocabulary. Colours come from a colour-blind-safe qualitative palette (Okabe & Ito, "Color Universal
 * Design", 2008); every colour is paired with a shape glyph and a word so nothing is told by colour alone.
 */
export const SEVERITY_STYLE: Record<Severity, { glyph: string; label: string; colour: string }> = {
  info: { glyph: '●', label: 'info', colour: '#0072B2' },
  warn: { glyph: '▲', label: 'warning', colour: '#E69F00' },
  critical: { glyph: '◆', label: 'critical', colour: '#D55E00' },
};

export const VERDICT_STYLE: Record<Verdict, { glyph: string; label: string; colour: string }> = {
  sound: { glyph: '✓', label: 'sound', colour: '#009E73' },
  doubtful: { glyph: '?', label: 'doubtful', colour: '#E69F00' },
  unfit: { glyph: '✕', label: 'unfit', colour: '#D55E00' },
};

export const DECISION_STYLE: Record<RunDecision, { key: string; label: string }> = {
  accept: { key: 'a', label: 'Accept' },
  'accept-trimmed': { key: 't', label: 'Accept trimmed' },
  reject: { key: 'r', label: 'Reject' },
  rerun: { key: 'n', label: 'Drive again' },
};

export const FLAG_KIND_LABEL: Record<FlagKind, string> = {
  'imu-gap': 'IMU gap',
  'imu-saturation': 'IMU saturation',
  'odometry-gap': 'odometry gap',
  'pose-jump': 'pose jump',
  units: 'units',
  'time-offset': 'time offset',
  'rotation-mismatch': 'rotation mismatch',
  'extrinsic-rotation': 'extrinsic rotation',
  'gravity-tilt': 'gravity tilt',
  'scale-drift': 'scale drift',
  'loop-mismatch': 'false loop',
  'loop-drift': 'loop drift',
  'gnss-divergence': 'GNSS divergence',
  unobservable: 'unobservable',
};

/** Format with a sensible number of significant digits for a measured value. */
export function fmtNum(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  if (v === 0) return '0';
  if (Math.abs(v) >= 1000) return v.toFixed(0);
  // Plain decimals down to 1e-6; JavaScript switches to exponent notation below that by itself.
  return Number(v.toPrecision(digits)).toString();
}

/** `1.02 ± 0.01 m` or `not observable: reason`. */
export function fmtEstimate(e: ScalarEstimate | Vec3Estimate): string {
  if (e.value === null) return `not observable: ${e.reason}`;
  if (Array.isArray(e.value)) {
    const s = e.sigma as number[] | null;
    const parts = e.value.map((v, i) => (s ? `${fmtNum(v)} ± ${fmtNum(s[i])}` : fmtNum(v)));
    return `(${parts.join(', ')}) ${e.unit}`;
  }
  const sigma = e.sigma as number | null;
  return sigma === null ? `${fmtNum(e.value)} ${e.unit}` : `${fmtNum(e.value)} ± ${fmtNum(sigma, 2)} ${e.unit}`;
}

/** Seconds as h:mm:ss (run time axis and durations). */
export function fmtDuration(sec: number | null | undefined): string {
  if (sec === null || sec === undefined || !Number.isFinite(sec)) return '—';
  const sign = sec < 0 ? '−' : '';
  let s = Math.round(Math.abs(sec));
  const hh = Math.floor(s / 3600);
  s -= hh * 3600;
  const mm = Math.floor(s / 60);
  const ss = s - mm * 60;
  const pad = (n: number): string => String(n).padStart(2, '0');
  return hh > 0 ? `${sign}${hh}:${pad(mm)}:${pad(ss)}` : `${sign}${mm}:${pad(ss)}`;
}

export function fmtDistance(m: number | null | undefined): string {
  if (m === null || m === undefined || !Number.isFinite(m)) return '—';
  return m >= 1000 ? `${(m / 1000).toFixed(2)} km` : `${m.toFixed(0)} m`;
}

/** ISO 8601 timestamp shown as `YYYY-MM-DD HH:MM` UTC (leads work across sites; UTC avoids ambiguity). */
export function fmtTimestamp(iso: string | null | undefined): string {
  if (!iso) return '—';
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return `${d.toISOString().slice(0, 16).replace('T', ' ')} UTC`;
}

/** `0.9 (threshold 0.5 %)`-style text for a flag's measured value against its threshold. */
export function fmtMeasured(value: number | null, threshold: number | null, unit: string): string {
  const v = value === null ? 'not measured' : `${fmtNum(value)} ${unit}`.trim();
  const t = threshold === null ? '' : ` · threshold ${fmtNum(threshold)} ${unit}`.trimEnd();
  return v + t;
}
