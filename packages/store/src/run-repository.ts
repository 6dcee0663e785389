import { randomUUID } from 'node:crypto';
import type { RunListPage, RunListQuery, RunStatus, RunSummary } from '@plumbline/contracts';
import { changeWatchOf } from './change-watch.ts';
import { RunConflictError } from './errors.ts';
import { RUN_COLUMNS, isoNow, toRunSummary, type RunRow } from './rows.ts';
import { buildListSql, encodeCursor, listQueryKey, runFilter, type SqlPart } from './run-list.ts';
import type { Statement } from 'better-sqlite3';
import type { AnalysisTicket, Db, RunCreate, RunCreateResult, RunRepository } from './types.ts';

function ticketOf(row: Pick<RunRow, 'id' | 'sha256' | 'job_key' | 'generation' | 'policy'>): AnalysisTicket | null {
  if (row.job_key === null) return null;
  return { run: row.id, sha256: row.sha256, job_key: row.job_key, generation: row.generation, policy: row.policy };
}

function normaliseIso(value: string | null): string | null {
  if (value === null) return null;
  const t = Date.parse(value);
  if (Number.isNaN(t)) throw new RangeError(`started_at is not an ISO 8601 date-time: ${value}`);
  return new Date(t).toISOString();
}

/** Runs: creation (idempotent per content), lookup, the filtered list, status and analysis generations. */
export function createRunRepository(db: Db): RunRepository {
  const byId = db.prepare(`SELECT ${RUN_COLUMNS} FROM runs WHERE id = ?`);
  const byKey = db.prepare(`SELECT ${RUN_COLUMNS} FROM runs WHERE robot_id = ? AND run_id = ?`);
  const upsertRobot = db.prepare(
    `INSERT INTO robots (robot_id, site, created_at, last_run_at) VALUES (?, ?, ?, ?)
     ON CONFLICT (robot_id) DO UPDATE SET site = excluded.site, last_run_at = excluded.last_run_at`,
  );
  const insertRun = db.prepare(
    `INSERT INTO runs (id, robot_id, run_id, site, started_at, received_at, status, status_reason, sha256, size_bytes, manifest_json)
     VALUES (@id, @robot_id, @run_id, @site, @started_at, @received_at, @status, @status_reason, @sha256, @size_bytes, @manifest_json)`,
  );
  const manifestOf = db.prepare('SELECT manifest_json FROM runs WHERE id = ?').pluck();
  const bumpGeneration = db.prepare(
    `UPDATE runs SET generation = generation + 1, job_key = id || '-g' || (generation + 1), policy = ?,
       status = 'queued', status_reason = NULL WHERE id = ? RETURNING id, sha256, job_key, generation, policy`,
  );
  const toAnalysing = db.prepare(`UPDATE runs SET status = 'analysing' WHERE id = ? AND job_key = ? AND status IN ('queued', 'analysing')`);
  const toFailed = db.prepare(
    `UPDATE runs SET status = 'failed', status_reason = ? WHERE id = ? AND job_key = ? AND status IN ('queued', 'analysing')`,
  );
  const toRejected = db.prepare(
    `UPDATE runs SET status = 'rejected', status_reason = ? WHERE id = ? AND job_key = ? AND status IN ('queued', 'analysing')`,
  );
  const blobUse = db.prepare(
    `SELECT EXISTS (SELECT 1 FROM runs WHERE sha256 = ?) OR EXISTS (SELECT 1 FROM reports WHERE repaired_csv_sha256 = ?)`,
  ).pluck();
  const pending = db.prepare(
    `SELECT id, sha256, job_key, generation, policy FROM runs
     WHERE status IN ('queued', 'analysing') AND job_key IS NOT NULL ORDER BY received_at, id LIMIT ?`,
  );

  const get = (id: string): RunSummary | null => {
    const row = byId.get(id) as RunRow | undefined;
    return row ? toRunSummary(row) : null;
  };

  const create = db.transaction((input: RunCreate): RunCreateResult => {
    const existing = byKey.get(input.robot_id, input.run_id) as RunRow | undefined;
    if (existing) {
      if (existing.sha256 !== input.sha256) throw new RunConflictError(input.robot_id, input.run_id, existing.sha256);
      return { run: toRunSummary(existing), created: false };
    }
    const now = isoNow();
    upsertRobot.run(input.robot_id, input.site, now, now);
    const id = randomUUID();
    insertRun.run({
      id,
      robot_id: input.robot_id,
      run_id: input.run_id,
      site: input.site,
      started_at: normaliseIso(input.started_at),
      received_at: now,
      status: input.status ?? 'received',
      status_reason: input.status_reason ?? null,
      sha256: input.sha256,
      size_bytes: input.size_bytes,
      manifest_json: input.manifest === undefined ? null : JSON.stringify(input.manifest),
    });
    return { run: get(id) as RunSummary, created: true };
  });

  // List statements prepared once per SQL text (a filter/sort/cursor combination), bounded.
  const listStatements = new Map<string, Statement<unknown[]>>();
  const prepared = (sql: string) => {
    let st = listStatements.get(sql);
    if (!st) {
      if (listStatements.size >= 256) listStatements.clear();
      st = db.prepare<unknown[]>(sql);
      listStatements.set(sql, st);
    }
    return st;
  };
  // Pages and first-page totals are cached until the database changes (a commit by another connection or a write by
  // this one, see change-watch.ts), checked on every call, so a write is seen by the next list. Counting a filter over
  // 100k runs costs far more than the page itself, and the page query (about 1 ms on the Fleet benchmark) dominates a
  // list request when nothing has changed between two identical requests.
  const changes = changeWatchOf(db);
  let cachedAt = '';
  const totals = new Map<string, number>();
  const pages = new Map<string, RunListPage>();
  const sameDatabase = (): void => {
    const at = changes.stamp();
    if (at === cachedAt) return;
    totals.clear();
    pages.clear();
    cachedAt = at;
  };

  const countOf = (sql: string, params: unknown[]): number => {
    const key = `${sql}\u0000${JSON.stringify(params)}`;
    let n = totals.get(key);
    if (n === undefined) {
      if (totals.size >= 256) totals.clear();
      n = prepared(`SELECT count(*) FROM runs WHERE ${sql}`).pluck().get(...params) as number;
      totals.set(key, n);
    }
    return n;
  };

  const readPage = (query: RunListQuery, page: SqlPart & { keyCount: number }): RunListPage => {
    const rows = prepared(page.sql).all(...page.params) as (RunRow & Record<string, unknown>)[];
    const more = rows.length > query.limit;
    const items = more ? rows.slice(0, query.limit) : rows;
    const last = items.at(-1);
    const keys = Array.from({ length: page.keyCount }, (_, i) => last?.[`k${i}`]);
    const next = more && last ? encodeCursor(query.sort, keys) : null;
    // the total is counted for the first page only; following pages (cursor set) return null to stay O(page)
    let total: number | null = null;
    if (query.cursor === undefined) {
      const filter = runFilter(query);
      total = countOf(filter.sql, filter.params);
    }
    // frozen: the page is shared by identical calls until the database changes (the API caches its checked JSON by it)
    return Object.freeze({ items: Object.freeze(items.map(toRunSummary)) as RunSummary[], next_cursor: next, total });
  };

  // A frozen query object (the API hands out one per distinct query string) keeps its key.
  const queryKeys = new WeakMap<RunListQuery, string>();
  const keyOf = (query: RunListQuery): string => {
    if (!Object.isFrozen(query)) return listQueryKey(query);
    let key = queryKeys.get(query);
    if (key === undefined) {
      key = listQueryKey(query);
      queryKeys.set(query, key);
    }
    return key;
  };

  /** The returned page may be shared with later identical calls until the database changes: do not modify it. */
  const list = (query: RunListQuery): RunListPage => {
    sameDatabase();
    // keyed by the query itself: a cached answer skips building the SQL and decoding the cursor (a cursor that fails
    // to decode throws below and is never cached, so a cached key always names a valid one)
    const key = keyOf(query);
    let result = pages.get(key);
    if (result === undefined) {
      const page = buildListSql(query, RUN_COLUMNS);
      if (pages.size >= 256) pages.clear();
      result = readPage(query, page);
      pages.set(key, result);
    }
    return result;
  };

  return {
    // IMMEDIATE: read-then-write transactions take the write lock up front, so two processes creating the same run
    // serialise instead of one failing with SQLITE_BUSY_SNAPSHOT
    create: (input) => create.immediate(input),
    get,
    findByKey(robotId, runId) {
      const row = byKey.get(robotId, runId) as RunRow | undefined;
      return row ? toRunSummary(row) : null;
    },
    manifest(id) {
      const text = manifestOf.get(id) as string | null | undefined;
      return typeof text === 'string' ? (JSON.parse(text) as unknown) : null;
    },
    list,
    idsMatching(query, max = 100_000) {
      const filter = runFilter(query);
      return db
        .prepare(`SELECT id FROM runs WHERE ${filter.sql} ORDER BY received_at, id LIMIT ?`)
        .pluck()
        .all(...filter.params, max) as string[];
    },
    setStatus(id: string, status: RunStatus, opts = {}) {
      const from = opts.from ?? [];
      const guard = from.length > 0 ? ` AND status IN (${from.map(() => '?').join(', ')})` : '';
      const info = db.prepare(`UPDATE runs SET status = ?, status_reason = ? WHERE id = ?${guard}`).run(status, opts.reason ?? null, id, ...from);
      return info.changes > 0;
    },
    requestAnalysis(id, opts = {}) {
      const row = bumpGeneration.get(opts.policy ?? null, id) as RunRow | undefined;
      return row ? ticketOf(row) : null;
    },
    markAnalysing: (id, jobKey) => toAnalysing.run(id, jobKey).changes > 0,
    markFailed: (id, jobKey, reason) => toFailed.run(reason, id, jobKey).changes > 0,
    markRejected: (id, jobKey, reason) => toRejected.run(reason, id, jobKey).changes > 0,
    blobReferenced: (sha256) => blobUse.get(sha256, sha256) === 1,
    ticket(id) {
      const row = byId.get(id) as RunRow | undefined;
      return row ? ticketOf(row) : null;
    },
    pendingTickets(limit = 10_000) {
      return (pending.all(limit) as RunRow[]).map(ticketOf).filter((t): t is AnalysisTicket => t !== null);
    },
  };
}
