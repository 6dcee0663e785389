/** Parses fault arguments of the form `kind[/variant][:magnitude][@t0[-t1]]`, e.g. `scale-drift/step:5@120`. */
import { FAULT_KINDS } from './spec.ts';
import type { FaultKind, FaultSpec } from './spec.ts';

const VARIANTS: Partial<Record<FaultKind, readonly string[]>> = {
  'time-offset': ['constant', 'skew'],
  'scale-drift': ['linear', 'step'],
  'imu-saturation': ['accel', 'gyro'],
  units: ['gyro-deg', 'accel-g'],
};

export class FaultSyntaxError extends Error {
  override name = 'FaultSyntaxError';
}

export function parseFault(text: string): FaultSpec {
  const m = /^([a-z-]+)(?:\/([a-z-]+))?(?::(-?[0-9.]+(?:e-?[0-9]+)?))?(?:@([0-9.]+)(?:-([0-9.]+))?)?$/.exec(text.trim());
  if (!m) throw new FaultSyntaxError(`fault "${text}": expected kind[/variant][:magnitude][@t0[-t1]]`);
  const kind = m[1] as FaultKind;
  if (!FAULT_KINDS.includes(kind)) throw new FaultSyntaxError(`fault "${text}": unknown kind "${m[1]}" (one of ${FAULT_KINDS.join(', ')})`);
  const variant = m[2];
  const allowed = VARIANTS[kind];
  if (variant !== undefined && !allowed?.includes(variant)) {
    throw new FaultSyntaxError(`fault "${text}": kind ${kind} has no variant "${variant}"${allowed ? ` (one of ${allowed.join(', ')})` : ''}`);
  }
  const f: FaultSpec = { kind, magnitude: m[3] !== undefined ? Number(m[3]) : 0 };
  if (variant !== undefined) f.variant = variant;
  if (m[4] !== undefined) f.startS = Number(m[4]);
  if (m[5] !== undefined) f.endS = Number(m[5]);
  const needsInterval = kind === 'imu-gap' || kind === 'odometry-gap' || kind === 'imu-saturation' || kind === 'gnss-divergence';
  if (needsInterval && (f.startS === undefined || f.endS === undefined || f.endS <= f.startS)) {
    throw new FaultSyntaxError(`fault "${text}": ${kind} needs an interval @t0-t1 with t1 > t0 (seconds since start)`);
  }
  if (kind === 'units' && variant === undefined) f.variant = 'gyro-deg';
  return f;
}
