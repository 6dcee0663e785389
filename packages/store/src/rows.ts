import type { RunDecision, RunStatus, RunSummary, Severity, Verdict } from '@plumbline/contracts';

/** Current time as the store's ISO 8601 UTC text. */
export function isoNow(now: Date = new Date()): string {
  return now.toISOString();
}

/** Row shape of `runs` as selected by RUN_COLUMNS. */
export interface RunRow {
  id: string;
  robot_id: string;
  run_id: string;
  site: string;
  started_at: string | null;
  received_at: string;
  status: RunStatus;
  status_reason: string | null;
  sha256: string;
  size_bytes: number;
  score: number | null;
  verdict: Verdict | null;
  worst_severity: Severity | null;
  flag_counts_json: string;
  duration_s: number | null;
  distance_m: number | null;
  decision: RunDecision | null;
  reviewed_at: string | null;
  priority: number;
  generation: number;
  job_key: string | null;
  policy: string | null;
}

export const RUN_COLUMNS = `runs.id, runs.robot_id, runs.run_id, runs.site, runs.started_at, runs.received_at, runs.status,
  runs.status_reason, runs.sha256, runs.size_bytes, runs.score, runs.verdict, runs.worst_severity, runs.flag_counts_json,
  runs.duration_s, runs.distance_m, runs.decision, runs.reviewed_at, runs.priority, runs.generation, runs.job_key, runs.policy`;

export function toRunSummary(row: RunRow): RunSummary {
  return {
    id: row.id,
    robot_id: row.robot_id,
    run_id: row.run_id,
    site: row.site,
    started_at: row.started_at,
    received_at: row.received_at,
    status: row.status,
    status_reason: row.status_reason,
    sha256: row.sha256,
    size_bytes: row.size_bytes,
    score: row.score,
    verdict: row.verdict,
    worst_severity: row.worst_severity,
    flag_counts: JSON.parse(row.flag_counts_json) as Record<string, number>,
    duration_s: row.duration_s,
    distance_m: row.distance_m,
    decision: row.decision,
    reviewed_at: row.reviewed_at,
  };
}

const SEVERITY_RANK: Record<Severity, number> = { info: 1, warn: 2, critical: 3 };

/**
 * Rank for the `priority` sort: runs that are analysed and still need a lead's decision come first, the worst
 * severity first among them. A `sound` run with nothing above info still ranks 1 (undecided) but below any warning.
 */
export function priorityOf(status: RunStatus, decision: RunDecision | null, worst: Severity | null): number {
  if (status !== 'done' || decision !== null) return 0;
  return worst ? SEVERITY_RANK[worst] : 1;
}
