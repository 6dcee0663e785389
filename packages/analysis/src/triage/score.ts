import type { Flag, PolicyThresholds, Segment, Severity, Verdict } from '@plumbline/contracts';
import { severityRank } from './flags.ts';

/**
 * Segments: warn and critical flags whose distance spans (time spans for flags without distance) overlap or touch
 * within `gapS` seconds are merged into one stretch; severity is the worst of its flags. Info flags make no segment.
 */
export function buildSegments(flags: readonly Flag[], gapS: number): Segment[] {
  const sel = flags.filter((f) => f.severity !== 'info').sort((a, b) => a.t_start - b.t_start || a.t_end - b.t_end || a.id.localeCompare(b.id));
  const out: Segment[] = [];
  let cur: Segment | null = null;
  for (const f of sel) {
    if (cur && f.t_start <= cur.t_end + gapS) {
      cur.t_end = Math.max(cur.t_end, f.t_end);
      cur.distance_start_m = Math.min(cur.distance_start_m, f.distance_start_m);
      cur.distance_end_m = Math.max(cur.distance_end_m, f.distance_end_m);
      if (severityRank(f.severity) > severityRank(cur.severity)) cur.severity = f.severity;
      if (!cur.kinds.includes(f.kind)) cur.kinds.push(f.kind);
      cur.flag_ids.push(f.id);
      continue;
    }
    cur = {
      id: `segment-${out.length + 1}`, t_start: f.t_start, t_end: f.t_end, distance_start_m: f.distance_start_m,
      distance_end_m: f.distance_end_m, severity: f.severity, kinds: [f.kind], flag_ids: [f.id],
    };
    out.push(cur);
  }
  for (const s of out) s.kinds.sort();
  return out;
}

/** Length of the union of intervals, after removing what `exclude` (a sorted disjoint union) covers. */
function unionLength(intervals: Array<[number, number]>, exclude: Array<[number, number]>): { length: number; union: Array<[number, number]> } {
  const sorted = intervals.filter(([a, b]) => b > a).sort((x, y) => x[0] - y[0] || x[1] - y[1]);
  const union: Array<[number, number]> = [];
  for (const [a, b] of sorted) {
    const last = union[union.length - 1];
    if (last && a <= last[1]) last[1] = Math.max(last[1], b);
    else union.push([a, b]);
  }
  let length = 0;
  for (const [a, b] of union) {
    length += b - a;
    for (const [c, d] of exclude) length -= Math.max(0, Math.min(b, d) - Math.max(a, c));
  }
  return { length: Math.max(0, length), union };
}

export interface ScoreInput {
  flags: readonly Flag[];
  /** Total odometry distance (m) and duration (s) of the run. */
  distanceM: number;
  durationS: number;
}

/**
 * Run health score, 0–100 (higher is healthier):
 *   score = 100 · (1 − w_crit · f_crit) · (1 − w_warn · f_warn) − Σ_kinds penalty(worst severity of the kind)
 * where f_crit is the fraction of the run's distance covered by critical flags and f_warn the fraction covered by
 * warn flags and not by critical ones (time fractions when the run moves less than 1 m); penalty is
 * `score_penalty_critical` or `score_penalty_warn` per flag kind at that worst severity (0 for info); the result is
 * clamped to [0, 100] and rounded to 0.1. Monotone: more flagged distance, another flag, or a higher severity never
 * raises it. Moving a distance δ from warn to critical changes the product by
 * δ·[w_warn − w_crit + w_crit·w_warn·(f_warn − f_crit)] − w_crit·w_warn·δ², which is ≤ 0 whenever
 * w_warn ≤ w_crit/(1 + w_crit); the warn weight is capped there so any policy keeps the score monotone.
 */
export function healthScore(input: ScoreInput, th: PolicyThresholds): number {
  const useDistance = input.distanceM >= 1;
  const span = (f: Flag): [number, number] => (useDistance ? [f.distance_start_m, f.distance_end_m] : [f.t_start, f.t_end]);
  const total = useDistance ? input.distanceM : Math.max(input.durationS, 1e-9);
  const crit = unionLength(input.flags.filter((f) => f.severity === 'critical').map(span), []);
  const warn = unionLength(input.flags.filter((f) => f.severity === 'warn').map(span), crit.union);
  const fc = Math.min(1, crit.length / total), fw = Math.min(1, warn.length / total);
  const wc = th.score_weight_critical, ww = Math.min(th.score_weight_warn, wc / (1 + wc));
  let score = 100 * (1 - wc * fc) * (1 - ww * fw);
  const worst = new Map<string, Severity>();
  for (const f of input.flags) {
    const w = worst.get(f.kind);
    if (!w || severityRank(f.severity) > severityRank(w)) worst.set(f.kind, f.severity);
  }
  for (const s of worst.values()) score -= s === 'critical' ? th.score_penalty_critical : s === 'warn' ? th.score_penalty_warn : 0;
  return Math.round(Math.min(100, Math.max(0, score)) * 10) / 10;
}

/** sound: nothing above info; doubtful: warnings; unfit: any critical flag. */
export function verdictOf(flags: readonly Flag[]): Verdict {
  let worst = 0;
  for (const f of flags) worst = Math.max(worst, severityRank(f.severity));
  return worst === 2 ? 'unfit' : worst === 1 ? 'doubtful' : 'sound';
}
