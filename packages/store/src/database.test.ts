import { cpSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DEFAULT_MIGRATIONS_DIR, migrate, openDatabase } from './database.ts';
import { MigrationError } from './errors.ts';

let dir: string;
let migrations: string;
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'plumbline-db-'));
  migrations = join(dir, 'migrations');
  // The runner is tested against the first migration only, so later schema migrations do not change these cases.
  mkdirSync(migrations);
  cpSync(join(DEFAULT_MIGRATIONS_DIR, '0001_initial.sql'), join(migrations, '0001_initial.sql'));
});
afterEach(() => rmSync(dir, { recursive: true, force: true }));

const versions = (db: Database.Database) => db.prepare('SELECT version, name FROM schema_migrations ORDER BY version').all();

describe('openDatabase', () => {
  it('creates a WAL database with foreign keys and a busy timeout, and applies every migration', () => {
    const db = openDatabase(join(dir, 'var', 'lib', 'a.db'), { migrationsDir: migrations, busyTimeoutMs: 1234 });
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    expect(db.pragma('busy_timeout', { simple: true })).toBe(1234);
    expect(versions(db)).toEqual([{ version: 1, name: 'initial' }]);
    const sha = db.prepare('SELECT sha256 FROM schema_migrations WHERE version = 1').pluck().get();
    expect(sha).toMatch(/^[0-9a-f]{64}$/);
    db.close();
  });

  it('applies pending migrations in version order and only once', () => {
    writeFileSync(join(migrations, '0003_third.sql'), 'ALTER TABLE probe ADD COLUMN c INTEGER;');
    writeFileSync(join(migrations, '0002_second.sql'), 'CREATE TABLE probe (a INTEGER);');
    const path = join(dir, 'b.db');
    const db = openDatabase(path, { migrationsDir: migrations });
    expect(versions(db).map((v) => (v as { name: string }).name)).toEqual(['initial', 'second', 'third']);
    db.close();
    const again = openDatabase(path, { migrationsDir: migrations });
    expect(migrate(again, migrations)).toEqual([]);
    again.close();
  });

  it('rolls a failing migration back completely and reports which one failed', () => {
    const path = join(dir, 'c.db');
    openDatabase(path, { migrationsDir: migrations }).close();
    // the first statement succeeds, the second fails: the table must not survive
    writeFileSync(join(migrations, '0002_broken.sql'), 'CREATE TABLE half_done (a INTEGER);\nINSERT INTO no_such_table VALUES (1);');
    expect(() => openDatabase(path, { migrationsDir: migrations })).toThrow(/0002_broken failed and was rolled back: no such table: no_such_table \(.*0002_broken\.sql\)/);
    const raw = new Database(path);
    expect(raw.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'half_done'").pluck().get()).toBe(0);
    expect(versions(raw)).toHaveLength(1);
    raw.close();
  });

  it('refuses a database written by newer code', () => {
    const path = join(dir, 'd.db');
    writeFileSync(join(migrations, '0002_future.sql'), 'CREATE TABLE future (a INTEGER);');
    openDatabase(path, { migrationsDir: migrations }).close();
    rmSync(join(migrations, '0002_future.sql'));
    expect(() => openDatabase(path, { migrationsDir: migrations })).toThrow(MigrationError);
    expect(() => openDatabase(path, { migrationsDir: migrations })).toThrow(/schema version 2 \(future\) is newer than this code knows \(1\)/);
  });

  it('refuses a database whose applied migration file has changed', () => {
    const path = join(dir, 'e.db');
    openDatabase(path, { migrationsDir: migrations }).close();
    const file = join(migrations, '0001_initial.sql');
    writeFileSync(file, `${readFileSync(file, 'utf8')}\n-- edited after release\n`);
    expect(() => openDatabase(path, { migrationsDir: migrations })).toThrow(/0001_initial has changed since it was applied/);
  });

  it('rejects a misnamed migration file, naming it', () => {
    writeFileSync(join(migrations, '0002_Add-Thing.sql'), 'SELECT 1;');
    expect(() => openDatabase(':memory:', { migrationsDir: migrations })).toThrow(/0002_Add-Thing\.sql: migration files are named NNNN_lowercase_name\.sql/);
  });

  it('rejects a gap in migration numbering', () => {
    writeFileSync(join(migrations, '0003_skipped.sql'), 'SELECT 1;');
    expect(() => openDatabase(':memory:', { migrationsDir: migrations })).toThrow(/expected version 2, found 3/);
  });
});
