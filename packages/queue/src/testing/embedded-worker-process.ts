/**
 * A worker process for the multi-process test: prints `ready`, waits for the file argv[3] to exist (a start
 * barrier, so both processes compete from the same moment), then works the embedded queue in the database argv[2]
 * until it is empty, printing one line per handled job (`<pid> <job id> <attempt>`).
 */
import { existsSync } from 'node:fs';
import { openDatabase } from '@plumbline/store';
import { createEmbeddedQueue } from '../embedded.ts';

const [path, goFile] = process.argv.slice(2);
if (!path || !goFile) throw new Error('usage: embedded-worker-process.ts <database path> <start file>');
const db = openDatabase(path, { busyTimeoutMs: 10_000 });
const queue = createEmbeddedQueue(db, { pollIntervalMs: 10, leaseMs: 5000 });
process.stdout.write('ready\n');
while (!existsSync(goFile)) await new Promise((r) => setTimeout(r, 5));
const worker = queue.work(async (job) => {
  process.stdout.write(`${process.pid} ${job.id} ${job.attempt}\n`);
  await new Promise((r) => setTimeout(r, 40));
}, { concurrency: 2 });
// wait until the queue has been drained by all processes
for (;;) {
  await new Promise((r) => setTimeout(r, 50));
  const c = await queue.counts();
  if (c.waiting + c.active + c.delayed === 0) break;
}
await worker.close();
await queue.close();
db.close();
