/**
 * Shared time cursor of a run page: the map and every plot listen, any of them may set it. `hover` follows the
 * pointer; `pinned` is a clicked time that stays when the pointer leaves. `range` highlights an interval (a flag).
 */
export interface CursorState {
  hoverT: number | null;
  pinnedT: number | null;
  range: { t0: number; t1: number; label: string } | null;
}

export interface TimeCursor {
  readonly state: CursorState;
  set(patch: Partial<CursorState>): void;
  /** The time to highlight: hover wins over pinned. */
  current(): number | null;
  subscribe(fn: (s: CursorState) => void): () => void;
}

export function createTimeCursor(): TimeCursor {
  const state: CursorState = { hoverT: null, pinnedT: null, range: null };
  const listeners = new Set<(s: CursorState) => void>();
  let scheduled = false;
  // Coalesce pointer storms into one redraw per animation frame.
  const flush = (): void => {
    scheduled = false;
    for (const fn of listeners) fn(state);
  };
  return {
    state,
    set(patch) {
      Object.assign(state, patch);
      if (!scheduled) {
        scheduled = true;
        requestAnimationFrame(flush);
      }
    },
    current: () => state.hoverT ?? state.pinnedT,
    subscribe(fn) {
      listeners.add(fn);
      return () => listeners.delete(fn);
    },
  };
}

/** Index of the last element of sorted `ts` that is <= t (0 when t precedes all). Binary search, O(log n). */
export function indexAtTime(ts: readonly number[], t: number): number {
  let lo = 0;
  let hi = ts.length - 1;
  if (hi < 0) return -1;
  if (t <= ts[0]!) return 0;
  if (t >= ts[hi]!) return hi;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (ts[mid]! <= t) lo = mid;
    else hi = mid;
  }
  return lo;
}
