import type { Db } from './types.ts';

/**
 * Tells the caches over one connection (verified tokens, list pages) whether the database changed since they were
 * filled: `PRAGMA data_version` moves when another connection commits, `total_changes()` when this one writes.
 *
 * Reading data_version opens and closes a read transaction (two file-lock calls), the dearest part of answering a
 * request from the caches. `withOneCheck` lets one synchronous step (one API request: its token, then its page)
 * read it once for all its cache lookups, as if they all ran at the step's first lookup. Writes by this connection
 * inside the step are still seen at once (total_changes is read on every lookup); a commit by another connection
 * during the step is seen from the next step on.
 */
export interface ChangeWatch {
  /** A value that differs from every earlier one once the database has changed. */
  stamp(): string;
  withOneCheck<T>(fn: () => T): T;
}

const watches = new WeakMap<Db, ChangeWatch>();

/** The watch of a connection, shared by every repository over it. */
export function changeWatchOf(db: Db): ChangeWatch {
  let watch = watches.get(db);
  if (watch === undefined) {
    watch = createChangeWatch(db);
    watches.set(db, watch);
  }
  return watch;
}

function createChangeWatch(db: Db): ChangeWatch {
  const dataVersion = db.prepare('PRAGMA data_version').pluck();
  const ownChanges = db.prepare('SELECT total_changes()').pluck();
  let depth = 0;
  let held: number | null = null;
  return {
    stamp() {
      let version = held;
      if (version === null) {
        version = dataVersion.get() as number;
        if (depth > 0) held = version;
      }
      return `${version}:${ownChanges.get() as number}`;
    },
    withOneCheck(fn) {
      depth++;
      try {
        return fn();
      } finally {
        if (--depth === 0) held = null;
      }
    },
  };
}
