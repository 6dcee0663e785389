import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach } from 'vitest';
import { openDatabase } from '../database.ts';
import type { Db } from '../types.ts';

/**
 * One database file per test, opened as often as a test likes: each `open()` is another connection, as another
 * process (the CLI, a second API, a worker) would hold. Connections are closed and the file removed after each test.
 */
export function useSharedDatabaseFile(prefix: string): { open(): Db } {
  let dir = '';
  let dbs: Db[] = [];
  beforeEach(async () => {
    dir = await mkdtemp(join(tmpdir(), prefix));
    dbs = [];
  });
  afterEach(async () => {
    for (const d of dbs) d.close();
    await rm(dir, { recursive: true, force: true });
  });
  return {
    open(): Db {
      const d = openDatabase(join(dir, 'plumbline.sqlite'));
      dbs.push(d);
      return d;
    },
  };
}
