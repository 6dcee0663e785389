/**
 * Merge gate: whether a run may be merged into the map, under a policy, given its report and latest review.
 *
 * Rules (docs/fleet.md):
 * 1. A run without a current report (not analysed, failed, rejected) is `not-analysed`: not ready.
 * 2. Flag severities are re-evaluated under the requested policy's thresholds (measured value vs warn/critical);
 *    without a policy the report's severities stand. The verdict is the worst severity (critical → unfit,
 *    warn → doubtful, else sound).
 * 3. Unreviewed: verdict sound → `ready` (keep the whole run); doubtful or unfit → `needs-review`.
 * 4. Latest review `accept` → `ready` (whole run). `accept-trimmed` → `ready-trimmed` with keep-ranges = run span
 *    minus every segment that holds a critical flag (under the policy) or a flag the lead upheld; flags the lead
 *    dismissed never cause a cut. Nothing left to keep → `not-ready`. `reject` or `rerun` → `not-ready`.
 */
import type {
  CutSegment,
  Flag,
  FlagDisposition,
  FlagReview,
  Interval,
  MergeGateAnswer,
  PolicyThresholds,
  Report,
  RunDecision,
  RunStatus,
  Severity,
  Verdict,
} from '@plumbline/contracts';
import { severityOf } from '@plumbline/contracts';

export interface MergeGateInput {
  run: string;
  status: RunStatus;
  report: Pick<Report, 'flags' | 'segments' | 'run'> | null;
  /** The latest review, or null. */
  review: { decision: RunDecision; flags: readonly FlagReview[] } | null;
  /** Thresholds of the policy to judge under; null = as analysed. */
  thresholds: PolicyThresholds | null;
}

const RANK: Record<Severity, number> = { info: 0, warn: 1, critical: 2 };

function effectiveSeverity(f: Flag, th: PolicyThresholds | null): Severity {
  if (!th || f.value === null) return f.severity;
  return severityOf(f.value, th[f.kind]);
}

function verdictOfRank(rank: number): Verdict {
  return rank >= 2 ? 'unfit' : rank === 1 ? 'doubtful' : 'sound';
}

/** [0, spanS] minus the union of `cuts`, in order; zero-length pieces dropped. */
export function keepRanges(spanS: number, cuts: readonly Interval[]): Interval[] {
  const sorted = [...cuts].sort((a, b) => a.t_start - b.t_start);
  const keep: Interval[] = [];
  let t = 0;
  for (const c of sorted) {
    const a = Math.max(0, c.t_start), b = Math.min(spanS, c.t_end);
    if (b <= t) continue;
    if (a > t) keep.push({ t_start: t, t_end: a });
    t = Math.max(t, b);
  }
  if (t < spanS) keep.push({ t_start: t, t_end: spanS });
  return keep;
}

function cutsOf(report: NonNullable<MergeGateInput['report']>, sev: Map<string, Severity>, disp: Map<string, FlagDisposition>): CutSegment[] {
  const cuts: CutSegment[] = [];
  for (const s of report.segments) {
    let critical = false, upheld = false;
    let worst = 0;
    for (const id of s.flag_ids) {
      if (disp.get(id) === 'dismissed') continue;
      const severity = sev.get(id) ?? s.severity;
      worst = Math.max(worst, RANK[severity]);
      critical ||= severity === 'critical';
      upheld ||= disp.get(id) === 'upheld';
    }
    if (!critical && !upheld) continue;
    const why = [critical ? 'critical flag' : null, upheld ? 'flag upheld by the reviewer' : null].filter(Boolean).join(' and ');
    const severity: Severity = worst === 2 ? 'critical' : worst === 1 ? 'warn' : 'info';
    cuts.push({ segment_id: s.id, t_start: s.t_start, t_end: s.t_end, severity, kinds: s.kinds, why });
  }
  return cuts;
}

/** The merge-gate answer for one run (pure; see the rules above). */
export function mergeGate(input: MergeGateInput): MergeGateAnswer {
  const { report, review } = input;
  const decision = review?.decision ?? null;
  if (!report || input.status !== 'done') {
    return { run: input.run, ready: false, state: 'not-analysed', verdict: null, decision, reasons: [`run is ${input.status}, not analysed`], cut: [], keep: [] };
  }
  const sev = new Map<string, Severity>();
  let worst = 0, warnN = 0, critN = 0;
  for (const f of report.flags) {
    const s = effectiveSeverity(f, input.thresholds);
    sev.set(f.id, s);
    worst = Math.max(worst, RANK[s]);
    if (s === 'warn') warnN++;
    if (s === 'critical') critN++;
  }
  const verdict = verdictOfRank(worst);
  const disp = new Map((review?.flags ?? []).map((f) => [f.flag_id, f.disposition] as const));
  const cut = cutsOf(report, sev, disp);
  const span = report.run.duration_s;
  const whole = [{ t_start: 0, t_end: span }];
  const base = { run: input.run, verdict, decision };
  const flagText = `${critN} critical and ${warnN} warning flags`;
  if (!review) {
    if (verdict === 'sound') return { ...base, ready: true, state: 'ready', reasons: ['not reviewed; verdict sound'], cut: [], keep: whole };
    return { ...base, ready: false, state: 'needs-review', reasons: [`verdict ${verdict} (${flagText}); a lead must review it`], cut, keep: [] };
  }
  if (review.decision === 'accept') return { ...base, ready: true, state: 'ready', reasons: ['accepted by a lead'], cut: [], keep: whole };
  if (review.decision === 'reject' || review.decision === 'rerun') {
    return { ...base, ready: false, state: 'not-ready', reasons: [review.decision === 'reject' ? 'rejected by a lead' : 'a lead asked for the route to be driven again'], cut: [], keep: [] };
  }
  const keep = keepRanges(span, cut);
  const reasons = ['accepted trimmed by a lead', ...cut.map((c) => `cut ${c.segment_id} (${c.kinds.join(', ')}) ${c.t_start.toFixed(1)}–${c.t_end.toFixed(1)} s: ${c.why}`)];
  if (keep.length === 0) return { ...base, ready: false, state: 'not-ready', reasons: [...reasons, 'nothing is left after cutting'], cut, keep: [] };
  return { ...base, ready: true, state: 'ready-trimmed', reasons, cut, keep };
}
