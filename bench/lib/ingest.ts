/**
 * Upload ingest of a bundle over loopback: the bytes streamed from disk in one POST to the real API (stored,
 * hashed, fsynced, manifest checked, run created) against the same bytes streamed to a bare Node server that
 * discards them. Each server runs in its own child process; the client (this process) is identical for both.
 * Each side is timed `repeats` times and the fastest is kept (the shared machine's load varies from second to
 * second); repeated API uploads of the same bytes do the same storing and checking and answer 200 instead of 201.
 */
import { createReadStream } from 'node:fs';
import { mkdir, rm, stat } from 'node:fs/promises';
import { request } from 'node:http';
import { join } from 'node:path';
import { pipeline } from 'node:stream/promises';
import { startServerChild } from './children.ts';

export interface IngestSide {
  seconds: number;
  mbPerS: number;
  status: number;
}

export interface IngestResult {
  bytes: number;
  api: IngestSide;
  baseline: IngestSide;
  /** api throughput / baseline throughput */
  ratio: number;
  /** run created by the API (id), proving the upload was ingested */
  runId: string | null;
  repeats: number;
}

async function post(port: number, path: string, file: string, bytes: number, token?: string): Promise<IngestSide & { body: string }> {
  const t0 = performance.now();
  const headers: Record<string, string | number> = { 'content-type': 'application/gzip', 'content-length': bytes };
  if (token) headers.authorization = `Bearer ${token}`;
  return new Promise((resolve, reject) => {
    const req = request({ host: '127.0.0.1', port, path, method: 'POST', headers }, (res) => {
      let body = '';
      res.on('data', (c: Buffer) => (body += c.toString()));
      res.on('end', () => {
        const seconds = (performance.now() - t0) / 1000;
        resolve({ seconds, mbPerS: bytes / 1e6 / seconds, status: res.statusCode ?? 0, body });
      });
    });
    req.on('error', reject);
    pipeline(createReadStream(file, { highWaterMark: 1 << 20 }), req).catch(reject);
  });
}

/** Uploads `file` to a fresh API data directory under `workDir` and to the discarding baseline server. */
export async function benchIngest(file: string, workDir: string, repeats = 1): Promise<IngestResult> {
  const fastest = <T extends { seconds: number }>(xs: T[]): T => xs.reduce((a, b) => (b.seconds < a.seconds ? b : a));
  const bytes = (await stat(file)).size;
  const dataDir = join(workDir, `ingest-${process.pid}`);
  await rm(dataDir, { recursive: true, force: true });
  await mkdir(dataDir, { recursive: true });
  try {
    const sink = await startServerChild('server-child.ts', ['sink']);
    let baseline: IngestSide;
    try {
      const tries: IngestSide[] = [];
      for (let i = 0; i < repeats; i++) {
        const b = await post(sink.info.port, '/', file, bytes);
        if (JSON.parse(b.body).bytes !== bytes) throw new Error(`baseline server received ${b.body}, expected ${bytes} bytes`);
        tries.push({ seconds: b.seconds, mbPerS: b.mbPerS, status: b.status });
      }
      baseline = fastest(tries);
    } finally {
      await sink.stop();
    }
    const api = await startServerChild<{ tokens: { robot: string } }>('server-child.ts', ['api', dataDir]);
    try {
      const tries: (IngestSide & { body: string })[] = [];
      for (let i = 0; i < repeats; i++) {
        const a = await post(api.info.port, '/api/v1/runs', file, bytes, api.info.tokens.robot);
        if (a.status !== (i === 0 ? 201 : 200)) throw new Error(`API answered ${a.status}: ${a.body.slice(0, 500)}`);
        tries.push(a);
      }
      const runId = (JSON.parse(tries[0]!.body) as { run?: { id?: string } }).run?.id ?? null;
      const a = fastest(tries);
      return { bytes, api: { seconds: a.seconds, mbPerS: a.mbPerS, status: tries[0]!.status }, baseline, ratio: a.mbPerS / baseline.mbPerS, runId, repeats };
    } finally {
      await api.stop();
    }
  } finally {
    await rm(dataDir, { recursive: true, force: true });
  }
}
