import { existsSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createBlobStore, createStore, openDatabase, type BlobStore, type Db, type Store } from '@plumbline/store';
import { sweepUploads } from './maintenance.ts';

let db: Db;
let store: Store;
let blobs: BlobStore;
let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'plumbline-sweep-'));
  db = openDatabase(':memory:');
  store = createStore(db);
  blobs = createBlobStore(dir);
});
afterEach(async () => {
  db.close();
  await rm(dir, { recursive: true, force: true });
});

describe('sweepUploads', () => {
  it('aborts sessions past expiry and deletes their bytes, leaving live ones', async () => {
    const t0 = new Date('2026-12-01T08:00:00Z');
    const mk = async (runId: string, ttlMs: number) => {
      const temp_path = await blobs.createTemp('upload');
      return store.uploads.create({ robot_id: 'tern-01', run_id: runId, size_bytes: 10, sha256: 'c'.repeat(64), temp_path, ttl_ms: ttlMs }, t0);
    };
    const old = await mk('old', 1000);
    const live = await mk('live', 3600_000);
    const r = await sweepUploads(store, blobs, new Date(t0.getTime() + 5000));
    expect(r.sessions).toBe(1);
    expect(store.uploads.get(old.id)?.state).toBe('aborted');
    expect(existsSync(old.temp_path)).toBe(false);
    expect(store.uploads.get(live.id)?.state).toBe('open');
    expect(existsSync(live.temp_path)).toBe(true);
    expect((await sweepUploads(store, blobs, new Date(t0.getTime() + 5000))).sessions).toBe(0);
  });
});
