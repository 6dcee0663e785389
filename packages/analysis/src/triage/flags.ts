import { severityOf, type Flag, type FlagKind, type PolicyThresholds, type Severity } from '@plumbline/contracts';
import { wordFlag } from './wording.ts';

/** A measured anomaly before triage: value only, no severity. Times epoch seconds. */
export interface Finding {
  kind: FlagKind;
  tStart: number;
  tEnd: number;
  value: number | null;
  unit: string;
  detail?: string;
  /** Named numbers for the wording (e.g. `chi2`, `gate`, `dof`, `confidencePct` of a loop). */
  params?: Record<string, number>;
}

/** Maps epoch seconds to run seconds and to odometry path length (metres). */
export interface RunClock {
  t0: number;
  distanceAt(tEpoch: number): number;
}

/** Unit conversions between what an estimator reports and what the policy states (exact factors). */
const CONVERSIONS: Record<string, number> = {
  's->ms': 1000,
  'ms->s': 0.001,
  'rad->deg': 180 / Math.PI,
  'rad/s->deg/s': 180 / Math.PI,
  'fraction->%': 100,
  'ratio->%': 100,
};

/** The finding's value in the policy's unit when a conversion is known; otherwise unchanged. */
export function toPolicyUnit(value: number | null, unit: string, policyUnit: string): { value: number | null; unit: string } {
  if (unit === policyUnit || value === null) return { value, unit: value === null ? policyUnit : unit };
  const k = CONVERSIONS[`${unit}->${policyUnit}`];
  return k === undefined ? { value, unit } : { value: value * k, unit: policyUnit };
}

const SEVERITY_RANK: Record<Severity, number> = { info: 0, warn: 1, critical: 2 };
export function severityRank(s: Severity): number {
  return SEVERITY_RANK[s];
}

/**
 * Fraction of the warning level from which a finding below it is still listed, as an info flag ("within tolerance,
 * approaching the limit"). Smaller values are not findings: the run-level estimates carry them. Common practice.
 */
export const INFO_FRACTION = 0.5;

/** True when a finding of this value is worth listing: info kinds without thresholds always, others from INFO_FRACTION of warn. */
function listed(value: number | null, severity: Severity, t: { warn: number | null; critical: number | null }): boolean {
  if (severity !== 'info' || value === null) return true;
  const limit = t.warn ?? t.critical;
  return limit === null || Math.abs(value) >= INFO_FRACTION * limit;
}

/**
 * Findings → flags: severity from the policy thresholds of the kind (magnitude compared; a finding without a value
 * is info), times in run seconds, distance span along the odometry, wording per kind, ids `${kind}-${n}` in time
 * order. Findings below INFO_FRACTION of the warning level are dropped. Deterministic order: t_start, kind, t_end,
 * value.
 */
export function buildFlags(findings: readonly Finding[], th: PolicyThresholds, clock: RunClock): Flag[] {
  const sorted = [...findings].sort(
    (a, b) => a.tStart - b.tStart || a.kind.localeCompare(b.kind) || a.tEnd - b.tEnd || (a.value ?? 0) - (b.value ?? 0),
  );
  const count = new Map<FlagKind, number>();
  const out: Flag[] = [];
  for (const f of sorted) {
    const t = th[f.kind];
    const { value, unit } = toPolicyUnit(f.value, f.unit, t.unit);
    const severity: Severity = value === null || unit !== t.unit ? 'info' : severityOf(value, t);
    if (unit === t.unit && !listed(value, severity, t)) continue;
    const n = (count.get(f.kind) ?? 0) + 1;
    count.set(f.kind, n);
    const threshold = severity === 'critical' ? t.critical : t.warn ?? t.critical;
    const tStart = Math.min(f.tStart, f.tEnd), tEnd = Math.max(f.tStart, f.tEnd);
    out.push({
      id: `${f.kind}-${n}`,
      kind: f.kind,
      severity,
      t_start: tStart - clock.t0,
      t_end: tEnd - clock.t0,
      distance_start_m: clock.distanceAt(tStart),
      distance_end_m: clock.distanceAt(tEnd),
      value,
      threshold,
      unit,
      ...wordFlag(f.kind, value, unit, { severity, threshold, params: f.params }),
    });
  }
  return out;
}
