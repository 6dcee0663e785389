import type { Report, Severity } from '@plumbline/contracts';
import { RUN_COLUMNS, isoNow, priorityOf, toRunSummary, type RunRow } from './rows.ts';
import type { Db, RecordOptions, RecordOutcome, ReportRepository, StoredReportInfo } from './types.ts';

const SEVERITY_ORDER: Severity[] = ['info', 'warn', 'critical'];

function worstSeverity(report: Report): Severity | null {
  let worst = -1;
  for (const f of report.flags) worst = Math.max(worst, SEVERITY_ORDER.indexOf(f.severity));
  return worst < 0 ? null : (SEVERITY_ORDER[worst] ?? null);
}

function flagCounts(report: Report): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const f of report.flags) counts[f.kind] = (counts[f.kind] ?? 0) + 1;
  return counts;
}

interface ReportInfoRow {
  id: number;
  run: string;
  job_key: string;
  analysis_version: string;
  policy_hash: string;
  score: number;
  verdict: string;
  is_current: number;
  created_at: string;
}

/** Analysis results: the exactly-once write of a report with its flags, segments and run summary; history. */
export function createReportRepository(db: Db): ReportRepository {
  const runState = db.prepare('SELECT status, job_key, decision FROM runs WHERE id = ?');
  const byJobKey = db.prepare('SELECT id FROM reports WHERE job_key = ?').pluck();
  const retire = db.prepare('UPDATE reports SET is_current = 0 WHERE run = ? AND is_current = 1');
  const insertReport = db.prepare(
    `INSERT INTO reports (run, job_key, analysis_version, policy_hash, score, verdict, is_current, report_json, created_at, repaired_csv_sha256)
     VALUES (?, ?, ?, ?, ?, ?, 1, ?, ?, ?)`,
  );
  const clearFlags = db.prepare('DELETE FROM flags WHERE run = ?');
  const clearSegments = db.prepare('DELETE FROM segments WHERE run = ?');
  const insertFlag = db.prepare(
    'INSERT INTO flags (run, report_id, flag_id, kind, severity, t_start, t_end, value) VALUES (?, ?, ?, ?, ?, ?, ?, ?)',
  );
  const insertSegment = db.prepare(
    'INSERT INTO segments (run, report_id, segment_id, severity, t_start, t_end, kinds) VALUES (?, ?, ?, ?, ?, ?, ?)',
  );
  const updateRun = db.prepare(
    `UPDATE runs SET status = 'done', status_reason = NULL, score = ?, verdict = ?, worst_severity = ?, flag_counts_json = ?,
       duration_s = ?, distance_m = ?, priority = ? WHERE id = ?`,
  );
  const audit = db.prepare(`INSERT INTO audit_log (at, actor, action, subject, detail_json) VALUES (?, 'worker', 'run.analysed', ?, ?)`);
  const currentJson = db.prepare('SELECT report_json FROM reports WHERE run = ? AND is_current = 1').pluck();
  const currentCsv = db.prepare('SELECT repaired_csv_sha256 FROM reports WHERE run = ? AND is_current = 1').pluck();
  const byIdJson = db.prepare('SELECT report_json FROM reports WHERE id = ?').pluck();
  const history = db.prepare(
    `SELECT id, run, job_key, analysis_version, policy_hash, score, verdict, is_current, created_at
     FROM reports WHERE run = ? ORDER BY id DESC`,
  );

  const summary = db.prepare(`SELECT ${RUN_COLUMNS} FROM runs WHERE id = ?`);

  const record = db.transaction((runId: string, report: Report, jobKey: string, opts: RecordOptions): RecordOutcome => {
    const run = runState.get(runId) as { status: string; job_key: string | null; decision: string | null } | undefined;
    if (!run) return { recorded: false, reason: 'not-found' };
    if (byJobKey.get(jobKey) !== undefined) return { recorded: false, reason: 'already-recorded' };
    if (run.job_key !== jobKey) return { recorded: false, reason: 'stale-job' };
    if (run.status !== 'queued' && run.status !== 'analysing') return { recorded: false, reason: 'wrong-status' };
    const now = isoNow();
    retire.run(runId);
    const reportId = Number(
      insertReport.run(runId, jobKey, report.analysis_version, report.policy_hash, report.score, report.verdict, JSON.stringify(report), now, opts.repairedCsvSha256 ?? null)
        .lastInsertRowid,
    );
    clearFlags.run(runId);
    clearSegments.run(runId);
    for (const f of report.flags) insertFlag.run(runId, reportId, f.id, f.kind, f.severity, f.t_start, f.t_end, f.value);
    for (const s of report.segments) insertSegment.run(runId, reportId, s.id, s.severity, s.t_start, s.t_end, s.kinds.join(','));
    const worst = worstSeverity(report);
    const decision = run.decision as Parameters<typeof priorityOf>[1];
    updateRun.run(
      report.score,
      report.verdict,
      worst,
      JSON.stringify(flagCounts(report)),
      report.run.duration_s,
      report.run.distance_m,
      priorityOf('done', decision, worst),
      runId,
    );
    audit.run(now, runId, JSON.stringify({ report_id: reportId, job_key: jobKey, score: report.score, verdict: report.verdict }));
    opts.within?.(toRunSummary(summary.get(runId) as RunRow));
    return { recorded: true, reportId };
  });

  return {
    recordAnalysis: (runId, report, jobKey, opts = {}) => record.immediate(runId, report, jobKey, opts),
    current(runId) {
      const text = currentJson.get(runId) as string | undefined;
      return text === undefined ? null : (JSON.parse(text) as Report);
    },
    repairedCsvOf(runId) {
      return (currentCsv.get(runId) as string | null | undefined) ?? null;
    },
    history(runId) {
      return (history.all(runId) as ReportInfoRow[]).map(
        ({ is_current, ...rest }): StoredReportInfo => ({ ...rest, current: is_current === 1 }),
      );
    },
    get(reportId) {
      const text = byIdJson.get(reportId) as string | undefined;
      return text === undefined ? null : (JSON.parse(text) as Report);
    },
  };
}
