/**
 * Turns measured quantities into findings: measured values with their interval, no severity (triage applies policy).
 * Window series are merged into stretches of consecutive windows that pass a reporting floor well below any default
 * warning threshold, so an 8-hour run does not produce one finding per window.
 */
import type { FlagKind } from '@plumbline/contracts';
import type { InertialFinding, WindowSeries } from './types.ts';

/**
 * Stretches of consecutive windows where `pick(value, w)` is true; value of a stretch = the value of largest magnitude.
 * Overlapping windows each own the middle of their span, t[w] ± hop/2 (hop = spacing of window centres), so a finding
 * does not spill over a neighbouring window that did not pass.
 */
export function stretches(
  s: WindowSeries, windowS: number, kind: FlagKind, unit: string, detail: string,
  pick: (value: number, w: number) => boolean, valueOf: (w: number) => number = (w) => s.value[w]!,
): InertialFinding[] {
  const out: InertialFinding[] = [];
  let start = -1, best = 0;
  const half = (s.t.length > 1 ? Math.min(windowS, s.t[1]! - s.t[0]!) : windowS) / 2;
  const close = (end: number) => {
    out.push({ kind, tStart: s.t[start]! - half, tEnd: s.t[end]! + half, value: best, unit, detail });
    start = -1;
    best = 0;
  };
  for (let w = 0; w < s.t.length; w++) {
    if (pick(s.value[w]!, w)) {
      if (start < 0) start = w;
      const v = valueOf(w);
      if (Math.abs(v) > Math.abs(best)) best = v;
    } else if (start >= 0) close(w - 1);
  }
  if (start >= 0) close(s.t.length - 1);
  return out;
}

/** Stretches of windows a quantity could not be estimated in ("unobservable: …" reasons); value = duration, s. */
export function unobservableStretches(s: WindowSeries, windowS: number, what: string): InertialFinding[] {
  const found = stretches(s, windowS, 'unobservable', 's', '', (_v, w) => s.reasons[w]!.startsWith('unobservable'), () => 0);
  return found.map((f) => {
    const first = s.t.findIndex((t) => t >= f.tStart - 1e-9);
    return { ...f, value: f.tEnd - f.tStart, detail: `${what}: ${s.reasons[Math.max(0, first)] ?? 'unobservable'}` };
  });
}
