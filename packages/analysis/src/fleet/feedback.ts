/**
 * Review feedback: how often leads upheld or dismissed each flag kind, and the warn threshold per kind that would
 * have kept the dismissed share under a target on the reviewed history.
 */
import type { FeedbackCell, FeedbackReport, FlagKind, PolicyThresholds, ReviewedFlag, ThresholdSuggestion } from '@plumbline/contracts';
import { FLAG_KINDS } from '@plumbline/contracts';

function cell(kind: FlagKind, site: string | null, flags: readonly ReviewedFlag[]): FeedbackCell {
  let upheld = 0, dismissed = 0, rerun = 0;
  for (const f of flags) {
    if (f.disposition === 'upheld') upheld++;
    else if (f.disposition === 'dismissed') dismissed++;
    else rerun++;
  }
  return { kind, site, upheld, dismissed, rerun_needed: rerun, precision: upheld + dismissed === 0 ? null : upheld / (upheld + dismissed) };
}

function groupBy<T>(items: readonly T[], key: (t: T) => string): Map<string, T[]> {
  const m = new Map<string, T[]>();
  for (const it of items) {
    const k = key(it);
    const list = m.get(k);
    if (list) list.push(it);
    else m.set(k, [it]);
  }
  return m;
}

/** Counts per kind and per (kind, site), in the contract's kind order, sites alphabetical. */
export function feedbackCells(flags: readonly ReviewedFlag[]): { byKind: FeedbackCell[]; byKindSite: FeedbackCell[] } {
  const byKindMap = groupBy(flags, (f) => f.kind);
  const byKind: FeedbackCell[] = [];
  const byKindSite: FeedbackCell[] = [];
  for (const kind of FLAG_KINDS) {
    const list = byKindMap.get(kind);
    if (!list) continue;
    byKind.push(cell(kind, null, list));
    const sites = groupBy(list, (f) => f.site);
    for (const site of [...sites.keys()].sort()) byKindSite.push(cell(kind, site, sites.get(site)!));
  }
  return { byKind, byKindSite };
}

export interface SuggestOptions {
  /** Largest acceptable share of dismissed flags among those at or above the threshold (default 0.2). */
  targetDismissedRate?: number;
  /** Fewest reviewed flags (upheld + dismissed with a value) before a suggestion is made (default 5). */
  minReviewed?: number;
}

/**
 * Suggested warn threshold of one flag kind from reviewed flags (measured |value| + disposition). Method: sort the
 * distinct magnitudes; the suggestion is the lowest cut T (midway between consecutive magnitudes, or the lowest
 * magnitude itself) such that among flags with |value| ≥ T the dismissed share is ≤ the target. The lowest such cut
 * keeps the most upheld flags. This is the empirical precision–recall trade-off of a single threshold on a score
 * (common practice; e.g. T. Fawcett, "An introduction to ROC analysis", Pattern Recognition Letters 27, 2006).
 * `ok: false` when there is too little history or no cut reaches the target while keeping an upheld flag.
 */
export function suggestThreshold(
  kind: FlagKind,
  flags: readonly ReviewedFlag[],
  current: { warn: number | null; unit: string },
  options: SuggestOptions = {},
): ThresholdSuggestion {
  const target = options.targetDismissedRate ?? 0.2;
  const rows = flags.filter((f) => f.kind === kind && f.value !== null && Number.isFinite(f.value) && f.disposition !== 'rerun-needed');
  const mags = rows.map((f) => ({ m: Math.abs(f.value!), up: f.disposition === 'upheld' })).sort((a, b) => a.m - b.m);
  const upTotal = mags.filter((x) => x.up).length;
  const dismissedTotal = mags.length - upTotal;
  const base = { kind, current_warn: current.warn, unit: current.unit, target_dismissed_rate: target, upheld_total: upTotal, dismissed_total: dismissedTotal };
  const fail = (reason: string): ThresholdSuggestion => ({ ...base, ok: false, reason, suggested_warn: null, upheld_kept: 0, dismissed_kept: 0 });
  if (mags.length < (options.minReviewed ?? 5)) return fail(`only ${mags.length} reviewed flags with a value`);
  if (upTotal === 0) return fail('no upheld flags: every reviewed flag was dismissed');
  // Suffix counts: scanning from the largest magnitude down, kept = flags at index ≥ i.
  let upKept = 0, disKept = 0;
  let best: { t: number; up: number; dis: number } | null = null;
  for (let i = mags.length - 1; i >= 0; i--) {
    if (mags[i]!.up) upKept++;
    else disKept++;
    if (i > 0 && mags[i - 1]!.m === mags[i]!.m) continue; // equal magnitudes are kept or cut together
    if (upKept > 0 && disKept <= target * (upKept + disKept)) {
      const t = i === 0 ? mags[0]!.m : (mags[i - 1]!.m + mags[i]!.m) / 2;
      best = { t, up: upKept, dis: disKept };
    }
  }
  if (!best) return fail(`no threshold keeps the dismissed share at or under ${target}`);
  return { ...base, ok: true, reason: null, suggested_warn: best.t, upheld_kept: best.up, dismissed_kept: best.dis };
}

/** Feedback counts and one suggestion per reviewed kind against the thresholds of `thresholds`. */
export function feedbackReport(flags: readonly ReviewedFlag[], thresholds: PolicyThresholds, options: SuggestOptions = {}): FeedbackReport {
  const { byKind, byKindSite } = feedbackCells(flags);
  const suggestions = byKind.map((c) => suggestThreshold(c.kind, flags, thresholds[c.kind], options));
  return { by_kind: byKind, by_kind_site: byKindSite, suggestions };
}
