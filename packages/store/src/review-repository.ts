import type { FlagReview, Review, RunDecision } from '@plumbline/contracts';
import { NotFoundError } from './errors.ts';
import { RUN_COLUMNS, isoNow, priorityOf, toRunSummary, type RunRow } from './rows.ts';
import type { Db, ReviewRepository, WithinTransaction } from './types.ts';

interface ReviewRow {
  id: number;
  run: string;
  decision: RunDecision;
  note: string;
  flags_json: string;
  reviewer: string;
  created_at: string;
}

function toReview(row: ReviewRow): Review {
  return {
    id: row.id,
    run: row.run,
    decision: row.decision,
    note: row.note,
    flags: JSON.parse(row.flags_json) as FlagReview[],
    reviewer: row.reviewer,
    created_at: row.created_at,
  };
}

/** Leads' reviews: each one also sets the run's decision and writes an audit entry in the same transaction. */
export function createReviewRepository(db: Db): ReviewRepository {
  const runState = db.prepare('SELECT status, worst_severity FROM runs WHERE id = ?');
  const insert = db.prepare(
    `INSERT INTO reviews (run, decision, note, flags_json, reviewer, created_at) VALUES (?, ?, ?, ?, ?, ?)
     RETURNING id, run, decision, note, flags_json, reviewer, created_at`,
  );
  const decide = db.prepare('UPDATE runs SET decision = ?, reviewed_at = ?, priority = ? WHERE id = ?');
  const audit = db.prepare(`INSERT INTO audit_log (at, actor, action, subject, detail_json) VALUES (?, ?, 'run.reviewed', ?, ?)`);
  const byRun = db.prepare('SELECT id, run, decision, note, flags_json, reviewer, created_at FROM reviews WHERE run = ? ORDER BY id');

  const summary = db.prepare(`SELECT ${RUN_COLUMNS} FROM runs WHERE id = ?`);

  type Input = { decision: RunDecision; note: string; flags: FlagReview[] };
  const add = db.transaction((runId: string, input: Input, reviewer: string, opts: WithinTransaction) => {
    const run = runState.get(runId) as Pick<RunRow, 'status' | 'worst_severity'> | undefined;
    if (!run) throw new NotFoundError('run', runId);
    const now = isoNow();
    const row = insert.get(runId, input.decision, input.note, JSON.stringify(input.flags), reviewer, now) as ReviewRow;
    decide.run(input.decision, now, priorityOf(run.status, input.decision, run.worst_severity), runId);
    audit.run(now, reviewer, runId, JSON.stringify({ review_id: row.id, decision: input.decision, flags: input.flags.length }));
    opts.within?.(toRunSummary(summary.get(runId) as RunRow));
    return toReview(row);
  });

  return {
    add: (runId, input, reviewer, opts = {}) =>
      add.immediate(runId, { decision: input.decision, note: input.note ?? '', flags: input.flags ?? [] }, reviewer, opts),
    list: (runId) => (byRun.all(runId) as ReviewRow[]).map(toReview),
  };
}
