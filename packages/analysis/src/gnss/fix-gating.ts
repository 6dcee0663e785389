import type { GnssColumns } from '@plumbline/bundle';

/** GGA quality code 6 is dead reckoning (estimated), 7 manual input, 8 simulation: never positions (NMEA 0183). */
const NON_POSITION_CODES = new Set([0, 6, 7, 8]);

export interface FixGateOptions {
  minFixQuality: number;
  maxHaccM: number;
  maxHdop: number;
  outageS: number;
}

export interface FixGating {
  /** 1 where the fix is good enough to compare against. */
  good: Uint8Array;
  nGood: number;
  /** Stretches of at least `outageS` without a good fix, epoch seconds (run start/end count as edges). */
  outages: Array<{ tStart: number; tEnd: number }>;
}

/**
 * Fix-quality gating of GNSS fixes: a fix is good when its GGA quality code is a position solution at or above
 * the policy minimum (NMEA 0183 GGA field 6: 1 GPS, 2 DGPS, 4 RTK fixed, 5 RTK float; 0, 6, 7, 8 are never
 * positions), its 1-sigma horizontal accuracy and HDOP are within the policy limits (unknown values pass), and
 * its coordinates are finite. RTK float (5) ranks between DGPS and RTK fixed for the minimum comparison.
 * Outages are gaps between good fixes (or to the span edges) of at least `outageS` seconds.
 */
export function gateFixes(g: GnssColumns, opts: FixGateOptions, spanStart: number, spanEnd: number): FixGating {
  const good = new Uint8Array(g.n);
  let nGood = 0;
  const rank = (code: number) => (code === 5 ? 3 : code === 4 ? 5 : code);
  const minRank = rank(opts.minFixQuality);
  for (let i = 0; i < g.n; i++) {
    const code = g.fix[i]!;
    if (!Number.isFinite(code) || NON_POSITION_CODES.has(code) || rank(code) < minRank) continue;
    if (!Number.isFinite(g.lat[i]! + g.lon[i]! + g.alt[i]!)) continue;
    const hacc = g.hacc[i]!, hdop = g.hdop[i]!;
    if (Number.isFinite(hacc) && hacc > opts.maxHaccM) continue;
    if (Number.isFinite(hdop) && hdop > opts.maxHdop) continue;
    good[i] = 1;
    nGood++;
  }
  const outages: Array<{ tStart: number; tEnd: number }> = [];
  let last = spanStart;
  for (let i = 0; i < g.n; i++) {
    if (!good[i]) continue;
    const t = g.t[i]!;
    if (t - last >= opts.outageS) outages.push({ tStart: last, tEnd: t });
    last = t;
  }
  if (spanEnd - last >= opts.outageS) outages.push({ tStart: last, tEnd: spanEnd });
  return { good, nGood, outages };
}
