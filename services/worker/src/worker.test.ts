import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import pino from 'pino';
import { createBlobStore, createStore, openDatabase, type Db, type Store } from '@plumbline/store';
import { createEmbeddedQueue, type JobQueue } from '@plumbline/queue';
import { startWorker } from './worker.ts';
import { scriptedReport } from './testing.ts';

let db: Db;
let store: Store;
let queue: JobQueue;
beforeEach(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
  queue = createEmbeddedQueue(db, { pollIntervalMs: 10 });
});
afterEach(async () => {
  await queue.close();
  db.close();
});

describe('startWorker', () => {
  it('re-enqueues a run left queued by a crash and analyses it', async () => {
    const { run } = store.runs.create({ robot_id: 'heron-01', run_id: 'r1', site: 'northgate-yard', started_at: null, sha256: 'e'.repeat(64), size_bytes: 1 });
    // Queued in the database, but the enqueue never reached the queue (the process died in between).
    store.runs.requestAnalysis(run.id);
    expect((await queue.counts()).waiting).toBe(0);
    const analysed: string[] = [];
    const w = await startWorker(
      { workerConcurrency: 1, policyFile: null },
      {
        store, blobs: createBlobStore('/nonexistent-blobs'), queue, logger: pino({ level: 'silent' }), clock: { now: () => new Date() },
        analyze: async (path) => (analysed.push(path), scriptedReport(72)),
      },
    );
    try {
      for (let i = 0; i < 200 && store.runs.get(run.id)?.status !== 'done'; i++) await new Promise((r) => setTimeout(r, 10));
      expect(store.runs.get(run.id)).toMatchObject({ status: 'done', score: 72 });
      expect(analysed).toHaveLength(1);
      // A second recovery finds nothing pending.
      expect(await w.recover()).toBe(0);
    } finally {
      await w.close();
    }
  });
});
