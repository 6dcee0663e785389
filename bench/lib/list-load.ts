/**
 * `GET /api/v1/runs` (filters + cursor pagination) on the Fleet database under autocannon load, against a bare
 * Fastify route that answers a constant body of the same size. The servers run in their own child processes;
 * autocannon runs here. Requests alternate between a filtered first page and a filtered page behind a cursor.
 */
import { cp, mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import autocannon from 'autocannon';
import { startServerChild } from './children.ts';

export interface LoadSide {
  requestsPerS: number;
  p50Ms: number;
  p99Ms: number;
  requests: number;
  errors: number;
  non2xx: number;
}

export interface ListLoadResult {
  connections: number;
  durationS: number;
  bodyBytes: number;
  paths: string[];
  api: LoadSide;
  baseline: LoadSide;
  /** api requests/s ÷ baseline requests/s */
  ratio: number;
}

function side(r: Awaited<ReturnType<typeof autocannon>>): LoadSide {
  return { requestsPerS: r.requests.average, p50Ms: r.latency.p50, p99Ms: r.latency.p99, requests: r.requests.total, errors: r.errors + r.timeouts, non2xx: r.non2xx };
}

/** Runs the load on a copy of the Fleet database (the original stays untouched for the next run). */
export async function benchListLoad(fleetDbPath: string, workDir: string, connections = 50, durationS = 20): Promise<ListLoadResult> {
  const dataDir = join(workDir, `list-${process.pid}`);
  await rm(dataDir, { recursive: true, force: true });
  await mkdir(dataDir, { recursive: true });
  try {
    await cp(fleetDbPath, join(dataDir, 'plumbline.sqlite'));
    const api = await startServerChild<{ tokens: { lead: string } }>('server-child.ts', ['api', dataDir]);
    let apiSide: LoadSide;
    let body: string;
    let paths: string[];
    try {
      const headers = { authorization: `Bearer ${api.info.tokens.lead}` };
      const first = '/api/v1/runs?site=northgate-yard&verdict=unfit&sort=-received_at&limit=50';
      const res = await fetch(`http://127.0.0.1:${api.info.port}${first}`, { headers });
      body = await res.text();
      if (res.status !== 200) throw new Error(`list answered ${res.status}: ${body.slice(0, 300)}`);
      const page = JSON.parse(body) as { items: unknown[]; next_cursor: string | null };
      if (page.items.length !== 50 || !page.next_cursor) throw new Error(`expected a full first page with a cursor, got ${page.items.length} items`);
      paths = [first, `${first}&cursor=${encodeURIComponent(page.next_cursor)}`];
      const r = await autocannon({ url: `http://127.0.0.1:${api.info.port}`, connections, duration: durationS, headers, requests: paths.map((path) => ({ path })) });
      apiSide = side(r);
    } finally {
      await api.stop();
    }
    const bodyFile = join(dataDir, 'constant.json');
    await writeFile(bodyFile, body);
    const constant = await startServerChild('server-child.ts', ['constant', bodyFile]);
    try {
      const r = await autocannon({ url: `http://127.0.0.1:${constant.info.port}`, connections, duration: durationS, requests: paths.map((path) => ({ path })) });
      const baseline = side(r);
      return { connections, durationS, bodyBytes: Buffer.byteLength(body), paths, api: apiSide, baseline, ratio: apiSide.requestsPerS / baseline.requestsPerS };
    } finally {
      await constant.stop();
    }
  } finally {
    await rm(dataDir, { recursive: true, force: true });
  }
}
