/**
 * The end-to-end flow shared by the embedded and the Redis tests: a listening API with a worker on the given queue,
 * a robot pushing a simulated run, the analysis, queries, a review, and signed webhooks received by a local server.
 */
import { spawnSync } from 'node:child_process';
import { createHmac, timingSafeEqual } from 'node:crypto';
import { mkdtemp, rm } from 'node:fs/promises';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { expect } from 'vitest';
import pino from 'pino';
import { originalTrajectoryCsv, repairedTrajectoryCsv } from '@plumbline/analysis';
import { inspectBundle } from '@plumbline/bundle';
import type { JobQueue } from '@plumbline/queue';
import { startWorker } from '../services/worker/src/worker.ts';
import { createThreadedAnalyze } from '../services/worker/src/threaded-analyze.ts';
import { analyseWithTrajectory } from '../services/worker/src/analysis-output.ts';
import { originalTrajectoryStream } from '../services/api/src/original-trajectory.ts';
import { createTestApp } from '../services/api/src/testing.ts';
import { pushBundle } from '../services/cli/src/push-client.ts';

const SIMULATOR = fileURLToPath(new URL('../packages/simulator/src/cli/simulate.ts', import.meta.url));
const SECRET = 'e2e-webhook-secret-0123456789';

/** Simulates a short run as a .tar.gz (the simulator's own command line, as `plumbline simulate` runs it). */
export async function simulateBundle(runId: string, durationS = 40): Promise<{ path: string; cleanup(): Promise<void> }> {
  const dir = await mkdtemp(join(tmpdir(), 'plumbline-e2e-'));
  const r = spawnSync(process.execPath, ['--import', 'tsx', SIMULATOR, '--out', dir, '--duration', String(durationS), '--seed', '7', '--run', runId, '--robot', 'kestrel-01', '--archive'], {
    encoding: 'utf8',
  });
  if (r.status !== 0) throw new Error(`simulator failed: ${r.stderr}`);
  return { path: join(dir, 'bundle.tar.gz'), cleanup: () => rm(dir, { recursive: true, force: true }) };
}

interface Received {
  event: string;
  body: Record<string, unknown>;
  signatureOk: boolean;
}

/** A webhook receiver that checks `Plumbline-Signature` as integrators are told to (HMAC, constant time, 5 min). */
async function startReceiver(): Promise<{ url: string; received: Received[]; close(): Promise<void> }> {
  const received: Received[] = [];
  const server: Server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      const raw = Buffer.concat(chunks).toString('utf8');
      const m = /^t=(\d+),v1=([0-9a-f]{64})$/.exec(String(req.headers['plumbline-signature']));
      let ok = false;
      if (m?.[1] && m[2]) {
        const mac = createHmac('sha256', SECRET).update(`${m[1]}.${raw}`).digest();
        ok = Math.abs(Date.now() / 1000 - Number(m[1])) <= 300 && timingSafeEqual(mac, Buffer.from(m[2], 'hex'));
      }
      received.push({ event: String(req.headers['plumbline-event']), body: JSON.parse(raw) as Record<string, unknown>, signatureOk: ok });
      res.statusCode = ok ? 204 : 401;
      res.end();
    });
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  return {
    url: `http://127.0.0.1:${(server.address() as AddressInfo).port}/plumbline-events`,
    received,
    close: () => new Promise((r) => server.close(() => r())),
  };
}

async function until<T>(what: string, f: () => Promise<T | null | undefined> | T | null | undefined, timeoutMs = 50_000): Promise<T> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await f();
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

/** Runs the whole flow; `makeQueue` gives the queue under test (embedded when absent). */
export async function runServiceFlow(opts: {
  makeQueue?: (db: import('@plumbline/store').Db) => JobQueue;
  label: string;
  /** Analyse in a worker thread, as `plumbline serve` and the standalone worker do. */
  threaded?: boolean;
}): Promise<void> {
  const bundle = await simulateBundle(`e2e-${opts.label}`);
  const receiver = await startReceiver();
  const t = await createTestApp({
    inspectBundle,
    ...(opts.makeQueue ? { makeQueue: opts.makeQueue } : {}),
    clock: { now: () => new Date() },
    deps: { trajectoryCsv: (path) => originalTrajectoryStream(path) },
  });
  const threads = opts.threaded ? createThreadedAnalyze(1) : null;
  const worker = await startWorker(t.config, {
    store: t.store,
    blobs: t.blobs,
    queue: t.queue,
    logger: pino({ level: 'silent' }),
    clock: { now: () => new Date() },
    analyze: threads ? threads.analyze : (path, policy) => analyseWithTrajectory(path, policy),
    dispatcherIntervalMs: 50,
  });
  try {
    const base = await t.app.listen({ port: 0, host: '127.0.0.1' });
    const call = async (method: string, path: string, role: keyof typeof t.tokens, body?: unknown) => {
      const res = await fetch(`${base}${path}`, {
        method,
        headers: { authorization: `Bearer ${t.tokens[role]}`, ...(body ? { 'content-type': 'application/json' } : {}) },
        ...(body ? { body: JSON.stringify(body) } : {}),
      });
      return { status: res.status, body: (await res.json()) as Record<string, any> };
    };
    const hook = await call('POST', '/api/v1/webhooks', 'integrator', { url: receiver.url, events: ['run.analysed', 'run.reviewed'], secret: SECRET });
    expect(hook.status).toBe(201);

    // The robot pushes its run (resumable upload over the socket, small chunks).
    const pushed = await pushBundle({ bundle: bundle.path, server: base, token: t.tokens.robot, chunkBytes: 64 * 1024 });
    expect(pushed.created).toBe(true);
    const id = pushed.run.id;

    const done = await until('analysis', async () => {
      const r = await call('GET', `/api/v1/runs/${id}`, 'lead');
      return ['done', 'rejected', 'failed'].includes(r.body.summary.status) ? r.body : null;
    });
    expect(done.summary.status, JSON.stringify(done.summary)).toBe('done');
    expect(done.report.run.run_id).toBe(`e2e-${opts.label}`);
    expect(done.summary.score).toBe(done.report.score);
    expect(['sound', 'doubtful', 'unfit']).toContain(done.summary.verdict);

    const report = await call('GET', `/api/v1/runs/${id}/report`, 'robot');
    expect(report.status).toBe(200);
    expect(report.body.schema).toBe('plumbline-report/1');
    for (const variant of ['original', 'repaired']) {
      const csv = await fetch(`${base}/api/v1/runs/${id}/trajectory.csv?variant=${variant}`, { headers: { authorization: `Bearer ${t.tokens.lead}` } });
      expect(csv.status).toBe(200);
      expect(csv.headers.get('content-type')).toMatch(/^text\/csv/);
      const text = await csv.text();
      // The repaired trajectory is the one the worker stored at analysis time, the same bytes as the analysis package's export.
      if (variant === 'repaired') expect(text).toBe(await repairedTrajectoryCsv(bundle.path));
      // The original is streamed from the bundle's odometry file alone, the same bytes as the analysis package's export.
      else expect(text).toBe(await originalTrajectoryCsv(bundle.path));
      const lines = text.trim().split('\n');
      expect(lines[0]).toMatch(/^t,/);
      // 40 s of odometry at the simulator's default 20 Hz: about 800 poses.
      expect(lines.length).toBeGreaterThan(700);
    }
    const bundleRes = await fetch(`${base}/api/v1/runs/${id}/bundle`, { headers: { authorization: `Bearer ${t.tokens.robot}` } });
    expect(bundleRes.headers.get('content-type')).toBe('application/gzip');
    expect((await bundleRes.arrayBuffer()).byteLength).toBe(pushed.sizeBytes);
    const listed = await call('GET', `/api/v1/runs?verdict=${done.summary.verdict}&status=done`, 'integrator');
    expect(listed.body.items.map((r: { id: string }) => r.id)).toContain(id);

    const review = await call('POST', `/api/v1/runs/${id}/reviews`, 'lead', {
      decision: 'accept',
      note: 'checked against the yard survey',
      flags: done.report.flags.slice(0, 1).map((f: { id: string }) => ({ flag_id: f.id, disposition: 'dismissed' })),
    });
    expect(review.status).toBe(201);

    await until('both webhooks', () => (receiver.received.length >= 2 ? true : null), 20_000);
    expect(receiver.received.map((r) => r.event).sort()).toEqual(['run.analysed', 'run.reviewed']);
    expect(receiver.received.every((r) => r.signatureOk)).toBe(true);
    const analysed = receiver.received.find((r) => r.event === 'run.analysed');
    expect((analysed?.body.run as { id: string }).id).toBe(id);
    const deliveries = await until('deliveries marked', async () => {
      const d = await call('GET', `/api/v1/webhooks/${hook.body.id}/deliveries`, 'integrator');
      return (d.body as unknown as Array<{ status: string }>).every((x) => x.status === 'delivered') ? d.body : null;
    });
    expect(deliveries).toHaveLength(2);
  } finally {
    await worker.close();
    await threads?.close();
    await t.close();
    await receiver.close();
    await bundle.cleanup();
  }
}
