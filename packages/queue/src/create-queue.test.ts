import { openDatabase } from '@plumbline/store';
import { describe, expect, it } from 'vitest';
import { createQueue } from './create-queue.ts';
import { job, waitFor } from './testing/queue-contract.ts';

describe('createQueue', () => {
  it('uses the embedded queue without redisUrl (jobs land in the SQLite jobs table)', async () => {
    const db = openDatabase(':memory:');
    const queue = createQueue({ pollIntervalMs: 20 }, db);
    await queue.enqueue(job(1), { jobId: 'embedded-1' });
    expect(db.prepare("SELECT state FROM jobs WHERE id = 'embedded-1'").pluck().get()).toBe('waiting');
    let ran = false;
    queue.work(async () => void (ran = true), { concurrency: 1 });
    await waitFor(() => ran, 5000, 'job run');
    await queue.close();
    db.close();
  });

  it('uses BullMQ with redisUrl (nothing in the SQLite jobs table; ping follows Redis)', async () => {
    const db = openDatabase(':memory:');
    const queue = createQueue({ redisUrl: 'redis://127.0.0.1:1' }, db);
    expect(await queue.ping()).toBe(false); // nothing listens on port 1
    expect(db.prepare('SELECT count(*) FROM jobs').pluck().get()).toBe(0);
    await queue.close().catch(() => undefined);
    db.close();
  });
});
