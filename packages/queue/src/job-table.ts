import { randomUUID } from 'node:crypto';
import type Database from 'better-sqlite3';

/**
 * SQL over the `jobs` table (migration 0001) for one queue name. Times are epoch milliseconds. A job is `waiting`
 * (due when run_at <= now; later = delayed or in backoff), `active` (leased to a worker until locked_until),
 * `completed` or `dead`. Claims run in IMMEDIATE transactions so two processes never lease the same job.
 */

export interface ClaimedJob {
  id: string;
  payload: string;
  attempts: number;
  max_attempts: number;
  lease_token: string;
}

export interface ReapedJob {
  id: string;
  payload: string;
  attempts: number;
  last_error: string;
}

export interface JobTableCounts {
  waiting: number;
  active: number;
  delayed: number;
  retrying: number;
  dead: number;
  completed: number;
}

export interface JobTable {
  /** Inserts a job, or returns false when a job with this id is waiting or active (dedup). A finished job with
   *  the same id is replaced, so re-submitting after completion runs it again. */
  insert(id: string, payload: string, runAt: number, maxAttempts: number, now: number): boolean;
  /** Dead-letters active jobs whose lease lapsed after their last allowed attempt (their worker died every time). */
  reap(now: number): ReapedJob[];
  /** Leases the next due job (waiting and due, or active with an expired lease and attempts left) for `leaseMs`. */
  claim(now: number, leaseMs: number): ClaimedJob | null;
  /** Extends a lease; false when the lease was lost (expired and re-claimed). */
  renew(id: string, leaseToken: string, until: number, now: number): boolean;
  complete(id: string, leaseToken: string, now: number): boolean;
  /** Failed attempt: back to waiting at `retryAt`, or dead when `retryAt` is null. */
  fail(id: string, leaseToken: string, error: string, retryAt: number | null, now: number): boolean;
  counts(now: number): JobTableCounts;
  /** Deletes completed jobs last updated before `before`; returns how many. Dead jobs are kept for inspection. */
  pruneCompleted(before: number): number;
}

export function createJobTable(db: Database.Database, queue: string): JobTable {
  const existing = db.prepare('SELECT state FROM jobs WHERE queue = ? AND id = ?').pluck();
  const upsert = db.prepare(
    `INSERT INTO jobs (id, queue, payload, state, attempts, max_attempts, run_at, locked_until, lease_token, last_error, created_at, updated_at)
     VALUES (@id, @queue, @payload, 'waiting', 0, @max, @runAt, NULL, NULL, NULL, @now, @now)
     ON CONFLICT (queue, id) DO UPDATE SET payload = excluded.payload, state = 'waiting', attempts = 0,
       max_attempts = excluded.max_attempts, run_at = excluded.run_at, locked_until = NULL, lease_token = NULL,
       last_error = NULL, updated_at = excluded.updated_at`,
  );
  // A job whose lease expired after its last allowed attempt is dead: its worker died on every try.
  const reap = db.prepare(
    `UPDATE jobs SET state = 'dead', last_error = COALESCE(last_error, 'lease expired') || ' (lease expired on the last attempt)',
       locked_until = NULL, lease_token = NULL, updated_at = @now
     WHERE queue = @queue AND state = 'active' AND locked_until < @now AND attempts >= max_attempts
     RETURNING id, payload, attempts, last_error`,
  );
  const nextDue = db.prepare(
    `SELECT id FROM jobs WHERE queue = ? AND state = 'waiting' AND run_at <= ? ORDER BY run_at, created_at LIMIT 1`,
  ).pluck();
  const nextExpired = db.prepare(
    `SELECT id FROM jobs WHERE queue = ? AND state = 'active' AND locked_until < ? AND attempts < max_attempts ORDER BY locked_until LIMIT 1`,
  ).pluck();
  const lease = db.prepare(
    `UPDATE jobs SET state = 'active', attempts = attempts + 1, locked_until = @until, lease_token = @token, updated_at = @now
     WHERE queue = @queue AND id = @id RETURNING id, payload, attempts, max_attempts, lease_token`,
  );
  const renew = db.prepare(
    `UPDATE jobs SET locked_until = ?, updated_at = ? WHERE queue = ? AND id = ? AND lease_token = ? AND state = 'active'`,
  );
  const complete = db.prepare(
    `UPDATE jobs SET state = 'completed', locked_until = NULL, lease_token = NULL, updated_at = ?
     WHERE queue = ? AND id = ? AND lease_token = ? AND state = 'active'`,
  );
  const fail = db.prepare(
    `UPDATE jobs SET state = @state, run_at = COALESCE(@retryAt, run_at), last_error = @error, locked_until = NULL,
       lease_token = NULL, updated_at = @now
     WHERE queue = @queue AND id = @id AND lease_token = @token AND state = 'active'`,
  );
  const tally = db.prepare(
    `SELECT
       sum(state = 'waiting' AND run_at <= @now) AS waiting,
       sum(state = 'active') AS active,
       sum(state = 'waiting' AND run_at > @now) AS delayed,
       sum(state = 'waiting' AND attempts > 0) AS retrying,
       sum(state = 'dead') AS dead,
       sum(state = 'completed') AS completed
     FROM jobs WHERE queue = @queue`,
  );

  const prune = db.prepare(`DELETE FROM jobs WHERE queue = ? AND state = 'completed' AND updated_at < ?`);

  const insert = db.transaction((id: string, payload: string, runAt: number, max: number, now: number): boolean => {
    const state = existing.get(queue, id) as string | undefined;
    if (state === 'waiting' || state === 'active') return false;
    upsert.run({ id, queue, payload, max, runAt, now });
    return true;
  });

  const claim = db.transaction((now: number, leaseMs: number): ClaimedJob | null => {
    const id = (nextDue.get(queue, now) ?? nextExpired.get(queue, now)) as string | undefined;
    if (id === undefined) return null;
    return lease.get({ queue, id, until: now + leaseMs, token: randomUUID(), now }) as ClaimedJob;
  });

  const reapAll = db.transaction((now: number) => reap.all({ queue, now }) as ReapedJob[]);

  return {
    reap: (now) => reapAll.immediate(now),
    insert: (id, payload, runAt, max, now) => insert.immediate(id, payload, runAt, max, now),
    claim: (now, leaseMs) => claim.immediate(now, leaseMs),
    renew: (id, token, until, now) => renew.run(until, now, queue, id, token).changes > 0,
    complete: (id, token, now) => complete.run(now, queue, id, token).changes > 0,
    fail(id, token, error, retryAt, now) {
      const state = retryAt === null ? 'dead' : 'waiting';
      return fail.run({ state, retryAt, error: error.slice(0, 4000), now, queue, id, token }).changes > 0;
    },
    pruneCompleted: (before) => prune.run(queue, before).changes,
    counts(now) {
      const row = tally.get({ now, queue }) as Record<keyof JobTableCounts, number | null>;
      return {
        waiting: row.waiting ?? 0,
        active: row.active ?? 0,
        delayed: row.delayed ?? 0,
        retrying: row.retrying ?? 0,
        dead: row.dead ?? 0,
        completed: row.completed ?? 0,
      };
    },
  };
}
