/** Significant digits kept for every float in a report (deterministic text, no false precision). */
export const REPORT_DIGITS = 6;

/** Keys whose numbers are epoch times and keep full precision (rounded to microseconds instead). */
const EPOCH_KEYS = new Set(['t0']);

function roundNumber(x: number, key: string | null): number {
  if (!Number.isFinite(x)) throw new RangeError(`report value ${key ?? '?'} is not finite (${x})`);
  if (Number.isInteger(x)) return x === 0 ? 0 : x;
  if (key !== null && EPOCH_KEYS.has(key)) return Math.round(x * 1e6) / 1e6;
  const r = Number(x.toPrecision(REPORT_DIGITS));
  return Object.is(r, -0) ? 0 : r;
}

/**
 * Deep copy with every non-integer number rounded to 6 significant digits (epoch `t0` to 1 µs), −0 written as 0.
 * Object key order is kept (reports are built in a fixed order), so equal input gives byte-identical JSON.
 * A non-finite number is a programmer error: JSON cannot carry it.
 */
export function roundReport<T>(value: T, key: string | null = null): T {
  if (typeof value === 'number') return roundNumber(value, key) as T;
  if (Array.isArray(value)) return value.map((v) => roundReport(v, key)) as T;
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) if (v !== undefined) out[k] = roundReport(v, k);
    return out as T;
  }
  return value;
}
