import { createHash } from 'node:crypto';
import { mkdirSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { MigrationError } from './errors.ts';
import type { Db, OpenDatabaseOptions } from './types.ts';

/** The repository's `migrations/` directory. */
export const DEFAULT_MIGRATIONS_DIR = fileURLToPath(new URL('../../../migrations/', import.meta.url));

export interface MigrationFile {
  version: number;
  name: string;
  path: string;
  sha256: string;
  sql: string;
}

const MIGRATION_NAME = /^(\d{4})_([a-z0-9_]+)\.sql$/;

/** Reads `NNNN_name.sql` files in version order; a misnamed .sql file, a duplicate version or a gap is refused. */
export function readMigrations(dir: string): MigrationFile[] {
  const files: MigrationFile[] = [];
  for (const entry of readdirSync(dir)) {
    if (!entry.endsWith('.sql')) continue;
    const m = MIGRATION_NAME.exec(entry);
    if (!m) throw new MigrationError(`${join(dir, entry)}: migration files are named NNNN_lowercase_name.sql`);
    const path = join(dir, entry);
    const sql = readFileSync(path, 'utf8');
    files.push({ version: Number(m[1]), name: m[2] ?? entry, path, sha256: createHash('sha256').update(sql).digest('hex'), sql });
  }
  files.sort((a, b) => a.version - b.version);
  files.forEach((f, i) => {
    if (f.version !== i + 1) throw new MigrationError(`migrations in ${dir}: expected version ${i + 1}, found ${f.version} (${f.name})`);
  });
  return files;
}

interface AppliedRow {
  version: number;
  name: string;
  sha256: string;
}

/**
 * Applies pending migrations, each in its own transaction together with its `schema_migrations` row. Refuses a
 * database that has a version this code does not know, or whose applied migration files were changed since.
 * Returns the versions applied by this call.
 */
export function migrate(db: Db, dir: string = DEFAULT_MIGRATIONS_DIR): number[] {
  db.exec(`CREATE TABLE IF NOT EXISTS schema_migrations (
    version INTEGER PRIMARY KEY, name TEXT NOT NULL, sha256 TEXT NOT NULL, applied_at TEXT NOT NULL)`);
  const known = readMigrations(dir);
  const applied = db.prepare('SELECT version, name, sha256 FROM schema_migrations ORDER BY version').all() as AppliedRow[];
  const newest = applied.at(-1);
  if (newest && newest.version > known.length) {
    throw new MigrationError(
      `database schema version ${newest.version} (${newest.name}) is newer than this code knows (${known.length}); ` +
        'upgrade Plumbline or use a matching database',
    );
  }
  for (const row of applied) {
    const file = known[row.version - 1];
    if (!file || file.sha256 !== row.sha256) {
      throw new MigrationError(
        `applied migration ${String(row.version).padStart(4, '0')}_${row.name} has changed since it was applied ` +
          `(recorded sha256 ${row.sha256}, file ${file?.sha256 ?? 'missing'}); add a new migration instead of editing it`,
      );
    }
  }
  const record = db.prepare('INSERT INTO schema_migrations (version, name, sha256, applied_at) VALUES (?, ?, ?, ?)');
  const done: number[] = [];
  for (const file of known.slice(applied.length)) {
    const apply = db.transaction(() => {
      db.exec(file.sql);
      record.run(file.version, file.name, file.sha256, new Date().toISOString());
    });
    try {
      apply();
    } catch (err) {
      throw new MigrationError(
        `migration ${String(file.version).padStart(4, '0')}_${file.name} failed and was rolled back: ${(err as Error).message} (${file.path})`,
      );
    }
    done.push(file.version);
  }
  return done;
}

/**
 * Opens (or creates, with its directory) the SQLite database at `path` (`':memory:'` for tests) with WAL
 * journaling, a busy timeout, foreign keys on, and applies the migrations.
 */
export function openDatabase(path: string, opts: OpenDatabaseOptions = {}): Db {
  const inMemory = path === ':memory:' || path === '';
  if (!inMemory) mkdirSync(dirname(path), { recursive: true });
  const db = new Database(path);
  try {
    if (!inMemory) db.pragma('journal_mode = WAL');
    db.pragma(`busy_timeout = ${Math.max(0, Math.floor(opts.busyTimeoutMs ?? 5000))}`);
    db.pragma('foreign_keys = ON');
    // FULL: a run reported as stored survives a power cut, not only a process crash.
    db.pragma('synchronous = FULL');
    migrate(db, opts.migrationsDir ?? DEFAULT_MIGRATIONS_DIR);
  } catch (err) {
    db.close();
    throw err;
  }
  return db;
}
