import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { originalTrajectoryCsv, repairedTrajectoryCsv } from '@plumbline/analysis';
import { inspectBundle } from '@plumbline/bundle';
import { createBullmqQueue, obliterateBullmqQueue } from '@plumbline/queue';
import { createTestApp } from '../services/api/src/testing.ts';
import { pushBundle } from '../services/cli/src/push-client.ts';
import { simulateBundle } from './service-flow.ts';
import { redisGate, TEST_REDIS_URL } from './redis-gate.ts';

const REDIS_URL = TEST_REDIS_URL;
const WORKER = fileURLToPath(new URL('./fixtures/remote-worker-process.ts', import.meta.url));


const runRedis = await redisGate('service-remote-worker');

async function until<T>(what: string, f: () => Promise<T | null | undefined>, timeoutMs = 60_000): Promise<T> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await f();
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

function startWorkerProcess(apiUrl: string, blobDir: string, token: string, queueName: string): Promise<ChildProcess> {
  const child = spawn(process.execPath, ['--import', 'tsx', WORKER, apiUrl, blobDir, REDIS_URL], {
    env: { ...process.env, PLUMBLINE_TOKEN: token, QUEUE_NAME: queueName },
    stdio: ['ignore', 'pipe', 'inherit'],
  });
  return new Promise((resolve, reject) => {
    child.stdout?.on('data', (d: Buffer) => d.toString().includes('ready') && resolve(child));
    child.once('exit', (code) => reject(new Error(`remote worker exited with ${code} before ready`)));
  });
}

// A worker on "another host": its own process, its own empty data directory, no database; the API in this process
// keeps the SQLite database in memory, so the worker cannot reach it except over HTTP.
describe.skipIf(!runRedis)('remote worker (BullMQ, results over HTTP)', () => {
  it('push -> analysed by a worker without the database -> recorded once; a duplicate post is refused', async () => {
    const queueName = `test-${randomUUID()}`;
    const bundle = await simulateBundle('e2e-remote', 30);
    const workerDir = await mkdtemp(join(tmpdir(), 'plumbline-remote-worker-'));
    const t = await createTestApp({
      inspectBundle,
      makeQueue: () => createBullmqQueue({ redisUrl: REDIS_URL, queueName, backoffMs: 50 }),
      clock: { now: () => new Date() },
      deps: { trajectoryCsv: (path) => originalTrajectoryCsv(path) },
    });
    let worker: ChildProcess | null = null;
    try {
      const base = await t.app.listen({ port: 0, host: '127.0.0.1' });
      t.store.webhooks.create({ url: 'http://127.0.0.1:9/hook', events: ['run.analysed'], secret: 's'.repeat(24) });
      worker = await startWorkerProcess(base, join(workerDir, 'blobs'), t.tokens.admin, queueName);
      const pushed = await pushBundle({ bundle: bundle.path, server: base, token: t.tokens.robot });
      const id = pushed.run.id;
      const run = await until('analysis', async () => {
        const r = t.store.runs.get(id);
        return r && ['done', 'rejected', 'failed'].includes(r.status) ? r : null;
      });
      expect(run.status, run.status_reason ?? '').toBe('done');
      expect(t.store.reports.history(id)).toHaveLength(1);
      // The worker had no shared blob directory: it downloaded the bundle into a temp file and removed it.
      expect(existsSync(join(workerDir, 'blobs'))).toBe(false);
      expect(t.store.stats().webhook_deliveries_pending).toBe(1);
      expect(t.store.audit.list({ subject: id, limit: 50 }).filter((a) => a.action === 'run.analysed')).toHaveLength(1);

      // The repaired trajectory came with the result and is served from the blob store.
      const csv = await fetch(`${base}/api/v1/runs/${id}/trajectory.csv?variant=repaired`, { headers: { authorization: `Bearer ${t.tokens.lead}` } });
      expect(csv.status).toBe(200);
      expect(await csv.text()).toBe(await repairedTrajectoryCsv(bundle.path));

      // The same result posted again (a re-delivered job) is refused and changes nothing.
      const jobKey = t.store.runs.ticket(id)?.job_key;
      const dup = await fetch(`${base}/api/v1/runs/${id}/analysis`, {
        method: 'POST',
        headers: { authorization: `Bearer ${t.tokens.admin}`, 'content-type': 'application/json' },
        body: JSON.stringify({ job_key: jobKey, report: t.store.reports.current(id) }),
      });
      expect(dup.status).toBe(200);
      expect(await dup.json()).toMatchObject({ recorded: false, reason: 'already-recorded' });
      expect(t.store.reports.history(id)).toHaveLength(1);
      expect(t.store.stats().webhook_deliveries_pending).toBe(1);
    } finally {
      worker?.kill('SIGTERM');
      await t.close();
      await obliterateBullmqQueue({ redisUrl: REDIS_URL, queueName });
      await bundle.cleanup();
      await rm(workerDir, { recursive: true, force: true });
    }
  }, 120_000);
});
