/**
 * Load test on loopback: robots uploading bundles, operations leads browsing and reviewing, integrators polling
 * and receiving signed webhooks, against one API process with the embedded queue and the real analysis worker.
 * Bounded in time (--seconds) and in clients; only 127.0.0.1 is contacted. Reports zero-5xx, per-route p50/p99,
 * peak RSS (of this process, which holds both the server and the clients) and checks every upload's SHA-256 in the
 * store afterwards.
 *
 *   node --import tsx test/reliability/load.ts --seconds 60 [--robots 50 --leads 20 --integrators 5] [--json out.json]
 */
import { createHash, createHmac, timingSafeEqual } from 'node:crypto';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import pino from 'pino';
import { analyzeBundle } from '@plumbline/analysis';
import { inspectBundle } from '@plumbline/bundle';
import { loadConfig } from '@plumbline/config';
import { createBlobStore, createStore, openDatabase } from '@plumbline/store';
import { createEmbeddedQueue } from '@plumbline/queue';
import { buildApp } from '../../services/api/src/app.ts';
import { startWorker } from '../../services/worker/src/worker.ts';
import { entriesOf, imuCsv, manifest, odometryCsv, tarGz } from '../corpus/builders.ts';

export interface LoadOptions {
  seconds: number;
  robots: number;
  leads: number;
  integrators: number;
}

export interface RouteFigures {
  count: number;
  p50Ms: number;
  p99Ms: number;
  maxMs: number;
}

export interface LoadReport {
  options: LoadOptions;
  durationS: number;
  requests: number;
  status: Record<string, number>;
  errors5xx: number;
  transportErrors: number;
  routes: Record<string, RouteFigures>;
  uploads: number;
  uploadsVerified: number;
  runsAnalysed: number;
  webhooksReceived: number;
  webhooksSignatureOk: number;
  peakRssMiB: number;
}

const BIRDS = ['kestrel', 'plover', 'heron', 'wren', 'tern', 'curlew', 'dunlin', 'avocet', 'godwit', 'sanderling'];
const robotName = (i: number) => `${BIRDS[i % BIRDS.length]}-${String(1 + Math.floor(i / BIRDS.length)).padStart(2, '0')}`;
const SECRET = 'load-webhook-secret-0123456789abcdef';
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

/** Deterministic jitter per client (no Math.random: runs are comparable). */
function jitter(seed: number): () => number {
  let x = (seed * 2654435761) >>> 0 || 1;
  return () => {
    x ^= x << 13; x >>>= 0; x ^= x >>> 17; x ^= x << 5; x >>>= 0;
    return x / 2 ** 32;
  };
}

function quantile(sorted: number[], q: number): number {
  if (sorted.length === 0) return 0;
  return sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))]!;
}

export async function runLoad(opts: LoadOptions): Promise<LoadReport> {
  const dir = await mkdtemp(join(tmpdir(), 'plumbline-load-'));
  const config = loadConfig({ PLUMBLINE_DATA_DIR: dir, PLUMBLINE_LOG_LEVEL: 'silent', PLUMBLINE_UPLOAD_RATE_PER_MIN: '600', PLUMBLINE_WORKER_CONCURRENCY: '1' });
  const db = openDatabase(config.dbPath);
  const store = createStore(db);
  const blobs = createBlobStore(config.blobDir);
  const queue = createEmbeddedQueue(db, { pollIntervalMs: 50 });
  const logger = pino({ level: 'silent' });
  const clock = { now: () => new Date() };
  const app = await buildApp(config, { store, blobs, queue, logger, clock, inspectBundle });
  const worker = await startWorker(config, { store, blobs, queue, logger, clock, analyze: (p, policy) => analyzeBundle(p, policy), dispatcherIntervalMs: 200 });
  const base = await app.listen({ host: '127.0.0.1', port: 0 });

  let webhooksReceived = 0;
  let webhooksSignatureOk = 0;
  const receiver = createServer((req, res) => {
    let raw = '';
    req.on('data', (c: Buffer) => (raw += c.toString()));
    req.on('end', () => {
      webhooksReceived++;
      const m = /^t=(\d+),v1=([0-9a-f]{64})$/.exec(String(req.headers['plumbline-signature']));
      const mac = m ? createHmac('sha256', SECRET).update(`${m[1]}.${raw}`).digest() : null;
      if (m && mac && Math.abs(Date.now() / 1000 - Number(m[1])) <= 300 && timingSafeEqual(mac, Buffer.from(m[2]!, 'hex'))) webhooksSignatureOk++;
      res.statusCode = 204;
      res.end();
    });
  });
  await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
  const hookUrl = `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/events`;

  const tokens = {
    lead: Array.from({ length: opts.leads }, (_, i) => store.tokens.create({ role: 'lead', name: `lead-${i}` }).token),
    integrator: Array.from({ length: opts.integrators }, (_, i) => store.tokens.create({ role: 'integrator', name: `integrator-${i}` }).token),
    robot: Array.from({ length: opts.robots }, (_, i) => store.tokens.create({ role: 'robot', name: robotName(i), robot_id: robotName(i) }).token),
  };

  const latencies = new Map<string, number[]>();
  const status: Record<string, number> = {};
  let transportErrors = 0;
  let requests = 0;
  async function call(route: string, token: string, method: string, path: string, body?: Buffer | string, contentType?: string): Promise<{ status: number; json: any }> {
    const t0 = performance.now();
    requests++;
    try {
      const res = await fetch(`${base}${path}`, { method, headers: { authorization: `Bearer ${token}`, ...(contentType ? { 'content-type': contentType } : {}) }, ...(body === undefined ? {} : { body: typeof body === 'string' ? body : new Uint8Array(body) }) });
      const text = await res.text();
      const ms = performance.now() - t0;
      (latencies.get(route) ?? latencies.set(route, []).get(route)!).push(ms);
      status[String(res.status)] = (status[String(res.status)] ?? 0) + 1;
      return { status: res.status, json: text && res.headers.get('content-type')?.includes('json') ? JSON.parse(text) : null };
    } catch {
      transportErrors++;
      return { status: 0, json: null };
    }
  }

  const endAt = Date.now() + opts.seconds * 1000;
  const running = () => Date.now() < endAt;
  const uploaded: Array<{ id: string; sha256: string }> = [];

  async function robot(i: number): Promise<void> {
    const rnd = jitter(i + 1);
    const name = robotName(i);
    await sleep(rnd() * 2000);
    for (let n = 0; running(); n++) {
      const runId = `${name}-load-${String(n).padStart(4, '0')}`;
      const bytes = await tarGz(entriesOf({ 'run.json': JSON.stringify(manifest(runId, { robot_id: name }), null, 2), 'odometry.csv': odometryCsv(60), 'imu.csv': imuCsv(600) }));
      const r = await call('upload', tokens.robot[i]!, 'POST', '/api/v1/runs', bytes, 'application/gzip');
      if (r.status === 201) uploaded.push({ id: r.json.run.id, sha256: sha256(bytes) });
      if (r.status === 201 && r.json.run.sha256 !== sha256(bytes)) throw new Error(`server digest differs for ${runId}`);
      await call('own-runs', tokens.robot[i]!, 'GET', '/api/v1/runs?limit=5');
      await sleep(3000 + rnd() * 4000);
    }
  }

  async function lead(i: number): Promise<void> {
    const rnd = jitter(1000 + i);
    while (running()) {
      const page = await call('list', tokens.lead[i]!, 'GET', `/api/v1/runs?limit=20${rnd() < 0.5 ? '&status=done' : ''}`);
      const items = (page.json?.items ?? []) as Array<{ id: string; status: string }>;
      const pick = items[Math.floor(rnd() * items.length)];
      if (pick) {
        await call('detail', tokens.lead[i]!, 'GET', `/api/v1/runs/${pick.id}`);
        if (pick.status === 'done') {
          await call('report', tokens.lead[i]!, 'GET', `/api/v1/runs/${pick.id}/report`);
          if (rnd() < 0.2) await call('review', tokens.lead[i]!, 'POST', `/api/v1/runs/${pick.id}/reviews`, JSON.stringify({ decision: rnd() < 0.7 ? 'accept' : 'reject', note: 'load test review' }), 'application/json');
        }
      }
      await call('robots', tokens.lead[i]!, 'GET', '/api/v1/robots');
      await sleep(300 + rnd() * 700);
    }
  }

  async function integrator(i: number): Promise<void> {
    await call('webhook-create', tokens.integrator[i]!, 'POST', '/api/v1/webhooks', JSON.stringify({ url: hookUrl, events: ['run.analysed', 'run.reviewed'], secret: SECRET }), 'application/json');
    while (running()) {
      await call('poll', tokens.integrator[i]!, 'GET', '/api/v1/runs?status=done&limit=50');
      await sleep(1000);
    }
  }

  let peakRss = process.memoryUsage().rss;
  const sampler = setInterval(() => (peakRss = Math.max(peakRss, process.memoryUsage().rss)), 250);
  const started = performance.now();
  try {
    await Promise.all([
      ...Array.from({ length: opts.robots }, (_, i) => robot(i)),
      ...Array.from({ length: opts.leads }, (_, i) => lead(i)),
      ...Array.from({ length: opts.integrators }, (_, i) => integrator(i)),
    ]);
  } finally {
    clearInterval(sampler);
  }
  const durationS = (performance.now() - started) / 1000;

  // Every upload's bytes, as stored, still have the digest the robot computed.
  let uploadsVerified = 0;
  const { createReadStream } = await import('node:fs');
  for (const u of uploaded) {
    const run = store.runs.get(u.id);
    if (!run || run.sha256 !== u.sha256) continue;
    const h = createHash('sha256');
    for await (const c of createReadStream(blobs.pathOf(u.sha256))) h.update(c as Buffer);
    if (h.digest('hex') === u.sha256) uploadsVerified++;
  }
  const runsAnalysed = db.prepare("SELECT count(*) FROM runs WHERE status = 'done'").pluck().get() as number;
  await app.close();
  await worker.close();
  await queue.close();
  db.close();
  await new Promise((r) => receiver.close(r));
  await rm(dir, { recursive: true, force: true });

  const routes: Record<string, RouteFigures> = {};
  for (const [route, xs] of latencies) {
    const s = [...xs].sort((a, b) => a - b);
    routes[route] = { count: s.length, p50Ms: Number(quantile(s, 0.5).toFixed(1)), p99Ms: Number(quantile(s, 0.99).toFixed(1)), maxMs: Number(s.at(-1)!.toFixed(1)) };
  }
  const errors5xx = Object.entries(status).filter(([k]) => k.startsWith('5')).reduce((a, [, n]) => a + n, 0);
  return { options: opts, durationS: Number(durationS.toFixed(1)), requests, status, errors5xx, transportErrors, routes, uploads: uploaded.length, uploadsVerified, runsAnalysed, webhooksReceived, webhooksSignatureOk, peakRssMiB: Number((peakRss / 1024 / 1024).toFixed(0)) };
}

export function formatTable(r: LoadReport): string {
  const lines = [
    `load: ${r.options.robots} robots, ${r.options.leads} leads, ${r.options.integrators} integrators for ${r.durationS} s on 127.0.0.1`,
    `requests ${r.requests}, 5xx ${r.errors5xx}, transport errors ${r.transportErrors}, status ${JSON.stringify(r.status)}`,
    `uploads ${r.uploads}, SHA-256 verified in the store ${r.uploadsVerified}, analysed ${r.runsAnalysed}, webhooks ${r.webhooksReceived} (signature ok ${r.webhooksSignatureOk}), peak RSS ${r.peakRssMiB} MiB`,
    '',
    '| route | requests | p50 ms | p99 ms | max ms |',
    '| --- | ---: | ---: | ---: | ---: |',
    ...Object.entries(r.routes).map(([k, v]) => `| ${k} | ${v.count} | ${v.p50Ms} | ${v.p99Ms} | ${v.maxMs} |`),
  ];
  return lines.join('\n');
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const { values } = parseArgs({ options: { seconds: { type: 'string', default: '60' }, robots: { type: 'string', default: '50' }, leads: { type: 'string', default: '20' }, integrators: { type: 'string', default: '5' }, json: { type: 'string' } } });
  const num = (name: string, v: string | undefined, max: number) => {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 1 || n > max) throw new Error(`--${name} must be an integer 1..${max}, got ${v}`);
    return n;
  };
  const report = await runLoad({ seconds: num('seconds', values.seconds, 600), robots: num('robots', values.robots, 200), leads: num('leads', values.leads, 100), integrators: num('integrators', values.integrators, 20) });
  process.stdout.write(`${formatTable(report)}\n`);
  if (values.json) await writeFile(values.json, JSON.stringify(report, null, 2) + '\n');
  process.exit(report.errors5xx === 0 && report.transportErrors === 0 && report.uploadsVerified === report.uploads ? 0 : 1);
}
