import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createBlobStore } from './blob-store.ts';
import { openDatabase } from './database.ts';
import { createStore } from './store.ts';
import { report, runInput } from './testing/fixtures.ts';
import type { BlobStore, Db, Store } from './types.ts';

let dir: string;
let db: Db;
let store: Store;
let blobs: BlobStore;
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'plumbline-blobrefs-'));
  db = openDatabase(':memory:');
  store = createStore(db);
  blobs = createBlobStore(dir);
});
afterEach(() => {
  db.close();
  rmSync(dir, { recursive: true, force: true });
});

async function put(text: string): Promise<string> {
  const info = await blobs.writeStream(Readable.from([Buffer.from(text)]), { maxBytes: 1 << 20 });
  expect(info.sha256).toBe(createHash('sha256').update(text).digest('hex'));
  return info.sha256;
}

describe('blobs.remove guarded by store.runs.blobReferenced', () => {
  it('removes a blob no run references, refuses one a run references, reports an absent one', async () => {
    const orphan = await put('refused bundle bytes');
    const kept = await put('stored bundle bytes');
    store.runs.create(runInput(1, { sha256: kept }));
    const guard = { isReferenced: store.runs.blobReferenced };
    expect(await blobs.remove(orphan, guard)).toEqual({ removed: true });
    expect(existsSync(blobs.pathOf(orphan))).toBe(false);
    expect(await blobs.remove(kept, guard)).toEqual({ removed: false, reason: 'referenced' });
    expect(existsSync(blobs.pathOf(kept))).toBe(true);
    expect(await blobs.remove(orphan, guard)).toEqual({ removed: false, reason: 'absent' });
  });

  it('puts the blob back when a reference appears while it is being removed', async () => {
    const sha = await put('raced bundle');
    let asked = 0;
    const result = await blobs.remove(sha, { isReferenced: () => ++asked > 1 });
    expect(result).toEqual({ removed: false, reason: 'referenced' });
    expect(existsSync(blobs.pathOf(sha))).toBe(true);
  });

  it('counts a report repaired-trajectory blob as a reference, and records its hash with the report', async () => {
    const csv = await put('t,x,y,z,qw,qx,qy,qz\n');
    const { run } = store.runs.create(runInput(2));
    const ticket = store.runs.requestAnalysis(run.id)!;
    expect(store.reports.repairedCsvOf(run.id)).toBeNull();
    expect(store.reports.recordAnalysis(run.id, report({ score: 90, verdict: 'sound' }), ticket.job_key, { repairedCsvSha256: csv }).recorded).toBe(true);
    expect(store.reports.repairedCsvOf(run.id)).toBe(csv);
    expect(store.runs.blobReferenced(csv)).toBe(true);
    expect(await blobs.remove(csv, { isReferenced: store.runs.blobReferenced })).toEqual({ removed: false, reason: 'referenced' });
  });
});

describe('runs.markRejected', () => {
  it('rejects only the current generation of an unfinished run', () => {
    const { run } = store.runs.create(runInput(3));
    const g1 = store.runs.requestAnalysis(run.id)!;
    const g2 = store.runs.requestAnalysis(run.id)!;
    expect(store.runs.markRejected(run.id, g1.job_key, 'old generation')).toBe(false);
    expect(store.runs.markRejected(run.id, g2.job_key, 'imu.csv line 4: bad number')).toBe(true);
    expect(store.runs.get(run.id)?.status).toBe('rejected');
    expect(store.runs.markRejected(run.id, g2.job_key, 'again')).toBe(false);
  });
});
