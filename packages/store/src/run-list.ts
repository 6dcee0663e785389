import type { RunListQuery, RunSort } from '@plumbline/contracts';
import { InvalidCursorError } from './errors.ts';

/**
 * SQL for the run list: filters, the ORDER BY of each sort and keyset (cursor) pagination. Every sort ends in `id`
 * so ties are broken deterministically and a cursor names one exact position; the sort expressions match the
 * expression indexes of migration 0001 (`COALESCE(started_at, '')`, `COALESCE(score, -1)`) so SQLite can walk an
 * index instead of sorting. Unscored runs sort as score -1 (first ascending, last descending); runs without
 * started_at sort as '' likewise.
 */

interface SortSpec {
  exprs: string[];
  desc: boolean;
}

const SORTS: Record<RunSort, SortSpec> = {
  received_at: { exprs: ['runs.received_at', 'runs.id'], desc: false },
  '-received_at': { exprs: ['runs.received_at', 'runs.id'], desc: true },
  started_at: { exprs: ["COALESCE(runs.started_at, '')", 'runs.id'], desc: false },
  '-started_at': { exprs: ["COALESCE(runs.started_at, '')", 'runs.id'], desc: true },
  score: { exprs: ['COALESCE(runs.score, -1)', 'runs.id'], desc: false },
  '-score': { exprs: ['COALESCE(runs.score, -1)', 'runs.id'], desc: true },
  // needs-decision first by worst severity, then the most recent
  priority: { exprs: ['runs.priority', 'runs.received_at', 'runs.id'], desc: true },
};

export type FilterQuery = Partial<Omit<RunListQuery, 'sort' | 'limit' | 'cursor'>>;

export interface SqlPart {
  sql: string;
  params: unknown[];
}

function isoOf(value: string, name: string): string {
  const t = Date.parse(value);
  if (Number.isNaN(t)) throw new RangeError(`${name} is not an ISO 8601 date-time: ${value}`);
  return new Date(t).toISOString();
}

/** WHERE clause (without the keyword; `1` when empty) for the filter fields of a run list query. */
export function runFilter(q: FilterQuery): SqlPart {
  const where: string[] = [];
  const params: unknown[] = [];
  const eq = (column: string, value: unknown): void => {
    if (value === undefined) return;
    where.push(`runs.${column} = ?`);
    params.push(value);
  };
  eq('robot_id', q.robot_id);
  eq('site', q.site);
  eq('verdict', q.verdict);
  eq('status', q.status);
  if (q.flag_kind !== undefined) {
    // IN (subquery) lets SQLite either drive from the flags index or probe a one-off set while walking a sort index
    where.push('runs.id IN (SELECT flags.run FROM flags WHERE flags.kind = ?)');
    params.push(q.flag_kind);
  }
  // decision and reviewed_at are set together; decision is the indexed one
  if (q.reviewed === 'true') where.push('runs.decision IS NOT NULL');
  if (q.reviewed === 'false') where.push('runs.decision IS NULL');
  if (q.score_min !== undefined) {
    where.push('runs.score >= ?');
    params.push(q.score_min);
  }
  if (q.score_max !== undefined) {
    where.push('runs.score <= ?');
    params.push(q.score_max);
  }
  if (q.started_after !== undefined) {
    where.push('runs.started_at >= ?');
    params.push(isoOf(q.started_after, 'started_after'));
  }
  if (q.started_before !== undefined) {
    where.push('runs.started_at < ?');
    params.push(isoOf(q.started_before, 'started_before'));
  }
  return { sql: where.length > 0 ? where.join(' AND ') : '1', params };
}

/** ORDER BY clause (without the keywords) of a sort. */
export function runOrder(sort: RunSort): string {
  const spec = SORTS[sort];
  return spec.exprs.map((e) => `${e} ${spec.desc ? 'DESC' : 'ASC'}`).join(', ');
}

/** The key expressions of a sort, to select alongside the row for building the next cursor. */
export function sortKeyExprs(sort: RunSort): string[] {
  return SORTS[sort].exprs;
}

/** Keyset condition "strictly after the cursor position" for a sort. */
export function afterCursor(sort: RunSort, key: unknown[]): SqlPart {
  const spec = SORTS[sort];
  const cols = `(${spec.exprs.join(', ')})`;
  const marks = `(${spec.exprs.map(() => '?').join(', ')})`;
  return { sql: `${cols} ${spec.desc ? '<' : '>'} ${marks}`, params: key };
}

export function encodeCursor(sort: RunSort, key: unknown[]): string {
  return Buffer.from(JSON.stringify({ s: sort, k: key }), 'utf8').toString('base64url');
}

/** Decodes a cursor and checks it was issued for the same sort with keys of the right types. */
export function decodeCursor(sort: RunSort, cursor: string): unknown[] {
  let parsed: unknown;
  try {
    parsed = JSON.parse(Buffer.from(cursor, 'base64url').toString('utf8'));
  } catch {
    throw new InvalidCursorError('not a cursor issued by this service');
  }
  if (typeof parsed !== 'object' || parsed === null) throw new InvalidCursorError('not a cursor issued by this service');
  const { s, k } = parsed as { s?: unknown; k?: unknown };
  if (s !== sort) throw new InvalidCursorError(`issued for sort ${String(s)}, used with ${sort}`);
  const n = SORTS[sort].exprs.length;
  if (!Array.isArray(k) || k.length !== n || !k.every((v) => typeof v === 'string' || typeof v === 'number')) {
    throw new InvalidCursorError('malformed position');
  }
  return k;
}

/**
 * A key naming one list answer: every field of the query in a fixed order, types kept (JSON), so two queries share a
 * key only when they build the same SQL with the same parameters. Built without the SQL, the cursor decoding or the
 * date normalisation, which then run only when the page is not cached.
 */
export function listQueryKey(q: RunListQuery): string {
  return JSON.stringify([
    q.sort, q.limit, q.cursor, q.robot_id, q.site, q.verdict, q.status, q.flag_kind, q.reviewed,
    q.score_min, q.score_max, q.started_after, q.started_before,
  ]);
}

/** The page query of a list request: rows plus their sort keys `k0..kn`, one row more than the limit. */
export function buildListSql(query: RunListQuery, columns: string): SqlPart & { keyCount: number } {
  const filter = runFilter(query);
  const keys = sortKeyExprs(query.sort);
  const where = [filter.sql];
  const params = [...filter.params];
  if (query.cursor !== undefined) {
    const after = afterCursor(query.sort, decodeCursor(query.sort, query.cursor));
    where.push(after.sql);
    params.push(...after.params);
  }
  const keySelect = keys.map((e, i) => `${e} AS k${i}`).join(', ');
  return {
    sql: `SELECT ${columns}, ${keySelect} FROM runs WHERE ${where.join(' AND ')} ORDER BY ${runOrder(query.sort)} LIMIT ?`,
    params: [...params, query.limit + 1],
    keyCount: keys.length,
  };
}
