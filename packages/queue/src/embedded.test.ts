import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openDatabase } from '@plumbline/store';
import { describe, expect, it } from 'vitest';
import { createEmbeddedQueue } from './embedded.ts';
import { createJobTable } from './job-table.ts';
import type { DeadLetteredJob } from './types.ts';
import { describeQueueContract, job, waitFor } from './testing/queue-contract.ts';

describeQueueContract('embedded (SQLite)', async ({ maxAttempts, backoffMs }) => {
  const db = openDatabase(':memory:');
  return {
    queue: createEmbeddedQueue(db, { maxAttempts, backoffMs, pollIntervalMs: 20, leaseMs: 2000 }),
    cleanup: async () => void db.close(),
  };
});

describe('embedded queue: leases', () => {
  it('re-delivers a job whose worker died once the lease has lapsed', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 20, leaseMs: 2000 });
    await queue.enqueue(job(1), { jobId: 'j1' });
    // a "worker" claims the job with a 150 ms lease and dies: no heartbeat, no completion
    const dead = createJobTable(db, 'analysis').claim(Date.now(), 150);
    expect(dead?.id).toBe('j1');
    expect((await queue.counts()).active).toBe(1);
    const attempts: number[] = [];
    const started = Date.now();
    queue.work(async (j) => void attempts.push(j.attempt), { concurrency: 1 });
    await waitFor(async () => (await queue.counts()).completed === 1, 5000, 're-delivery');
    expect(attempts).toEqual([2]); // the lost attempt counts
    expect(Date.now() - started).toBeGreaterThanOrEqual(100); // not before the 150 ms lease ran out
    await queue.close();
    db.close();
  });

  it('keeps a long job leased by renewing the lease while the handler runs', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 20, leaseMs: 600 });
    await queue.enqueue(job(2), { jobId: 'long' });
    const lockedUntil = () => db.prepare("SELECT locked_until FROM jobs WHERE id = 'long'").pluck().get() as number;
    let runs = 0;
    const renewals: number[] = [];
    queue.work(async () => {
      runs += 1;
      // run until the heartbeat has pushed the lease forward three times (no wall-clock bound: robust under load)
      let last = lockedUntil();
      while (renewals.length < 3) {
        await new Promise((r) => setTimeout(r, 20));
        const now = lockedUntil();
        if (now > last) renewals.push(now - last);
        last = now;
      }
    }, { concurrency: 2 });
    await waitFor(async () => (await queue.counts()).completed === 1, 20_000, 'completion');
    expect(runs).toBe(1); // the second worker slot never stole the job
    expect(renewals).toHaveLength(3);
    await queue.close();
    db.close();
  });

  it('dead-letters a job whose lease lapsed on its last attempt', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 20, maxAttempts: 1 });
    await queue.enqueue(job(3), { jobId: 'died' });
    createJobTable(db, 'analysis').claim(Date.now(), 50);
    await new Promise((r) => setTimeout(r, 80));
    let ran = false;
    const dead: DeadLetteredJob[] = [];
    queue.work(async () => void (ran = true), { concurrency: 1, onDeadLetter: async (d) => void dead.push(d) });
    await waitFor(async () => (await queue.counts()).dead === 1, 5000, 'dead-letter');
    await waitFor(() => dead.length === 1, 5000, 'dead-letter hook');
    expect(ran).toBe(false);
    // the hook learns of a job no handler finished: id, payload, the one attempt used, why
    expect(dead[0]).toEqual({ id: 'died', payload: job(3), attempts: 1, error: 'lease expired (lease expired on the last attempt)' });
    await queue.close();
    db.close();
  });
});

describe('embedded queue: durability', () => {
  it('keeps waiting jobs across a restart (close the database, reopen)', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-queue-'));
    try {
      const path = join(dir, 'plumbline.db');
      const db1 = openDatabase(path);
      const q1 = createEmbeddedQueue(db1);
      await q1.enqueue(job(4), { jobId: 'survivor' });
      await q1.close();
      db1.close();

      const db2 = openDatabase(path);
      const q2 = createEmbeddedQueue(db2, { pollIntervalMs: 20 });
      expect((await q2.counts()).waiting).toBe(1);
      const seen: string[] = [];
      q2.work(async (j) => void seen.push(`${j.id}:${j.payload.run}`), { concurrency: 1 });
      await waitFor(async () => (await q2.counts()).completed === 1, 5000, 'completion after restart');
      expect(seen).toEqual(['survivor:run-4']);
      await q2.close();
      db2.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('dead-letters an invalid payload without calling the handler', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 20 });
    createJobTable(db, 'analysis').insert('bad', '{"run": 5}', Date.now(), 5, Date.now());
    let called = false;
    queue.work(async () => void (called = true), { concurrency: 1 });
    await waitFor(async () => (await queue.counts()).dead === 1, 5000, 'dead-letter');
    expect(called).toBe(false);
    const row = db.prepare("SELECT last_error FROM jobs WHERE id = 'bad'").pluck().get() as string;
    expect(row).toMatch(/UnrecoverableJobError: invalid job payload/);
    await queue.close();
    db.close();
  });
});

describe('embedded queue: housekeeping', () => {
  it('prunes completed jobs older than the cut-off and keeps dead ones', async () => {
    const db = openDatabase(':memory:');
    const table = createJobTable(db, 'analysis');
    const old = Date.now() - 10_000;
    table.insert('done-old', JSON.stringify(job(1)), old, 5, old);
    table.insert('dead-old', JSON.stringify(job(2)), old, 5, old);
    const a = table.claim(old, 1000)!;
    table.complete(a.id, a.lease_token, old);
    const b = table.claim(old, 1000)!;
    table.fail(b.id, b.lease_token, 'gave up', null, old);
    table.insert('fresh', JSON.stringify(job(3)), Date.now(), 5, Date.now());
    const c = table.claim(Date.now(), 1000)!;
    table.complete(c.id, c.lease_token, Date.now());
    expect(table.pruneCompleted(Date.now() - 5000)).toBe(1);
    expect(db.prepare('SELECT id FROM jobs ORDER BY id').pluck().all()).toEqual(['dead-old', 'fresh']);
    db.close();
  });

  it('refuses job ids with ":" (not accepted by the Redis adapter either)', async () => {
    const db = openDatabase(':memory:');
    const queue = createEmbeddedQueue(db);
    await expect(queue.enqueue(job(1), { jobId: 'run:1' })).rejects.toThrow(RangeError);
    db.close();
  });
});

describe('embedded queue: database gone', () => {
  it('does not crash the process when the database closes under a running job', async () => {
    const db = openDatabase(':memory:');
    const errors: unknown[] = [];
    const queue = createEmbeddedQueue(db, { pollIntervalMs: 20, leaseMs: 60, onError: (e) => errors.push(e) });
    await queue.enqueue(job(1));
    let started = false;
    const worker = queue.work(async () => {
      started = true;
      await new Promise((r) => setTimeout(r, 100)); // heartbeats fire against a closed database meanwhile
    }, { concurrency: 1 });
    await waitFor(() => started, 5000, 'start');
    db.close();
    await worker.close(); // resolves: completion bookkeeping failed quietly instead of rejecting
    expect(db.open).toBe(false);
    expect(errors.length).toBeGreaterThan(0); // reported for logging
    expect(String(errors[0])).toMatch(/not open/);
  });
});
