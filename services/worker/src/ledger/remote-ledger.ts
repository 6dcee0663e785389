import { createHash } from 'node:crypto';
import { createWriteStream, existsSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable, Transform } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { z } from 'zod';
import { Policy } from '@plumbline/contracts';
import type { AnalysisLedger, BundleHandle, StartOutcome } from './ledger.ts';

const StartAnswer = z.object({
  started: z.boolean(),
  reason: z.enum(['stale', 'unknown-policy']).optional(),
  message: z.string().optional(),
  sha256: z.string().length(64).optional(),
  policy: Policy.optional(),
});
const ResultAnswer = z.object({ recorded: z.boolean(), reason: z.string().optional() });

/** A non-2xx answer of the API (the queue retries the job; the status and problem body are in the message). */
export class RemoteApiError extends Error {
  override readonly name = 'RemoteApiError';
  constructor(
    readonly status: number,
    readonly route: string,
    detail: string,
  ) {
    super(`${route} answered ${status}: ${detail.slice(0, 300)}`);
  }
}

export interface RemoteLedgerOptions {
  /** API base URL, e.g. `https://plumbline.saltmarsh.example` (no trailing slash). */
  apiUrl: string;
  /** An admin-role token. */
  token: string;
  /** Path of a blob by SHA-256 in the (optionally) shared blob directory; null when this host has none. */
  blobPathOf: ((sha256: string) => string) | null;
  fetch?: typeof fetch;
}

/**
 * The ledger of a worker on another host: no database. The bundle is read from the shared blob directory when this
 * host has it, else downloaded (`GET /api/v1/runs/:id/bundle`, SHA-256 checked) into a temp file removed after the job.
 * Start and result go to the admin routes `POST /api/v1/runs/:id/analysis/start` and `POST /api/v1/runs/:id/analysis`;
 * the repaired trajectory travels in the result as base64 of the gzipped CSV.
 */
export function createRemoteLedger(opts: RemoteLedgerOptions): AnalysisLedger {
  const doFetch = opts.fetch ?? fetch;
  const auth = { authorization: `Bearer ${opts.token}` };

  async function post(path: string, body: unknown): Promise<Response> {
    const res = await doFetch(`${opts.apiUrl}${path}`, {
      method: 'POST',
      headers: { ...auth, 'content-type': 'application/json' },
      body: JSON.stringify(body),
    });
    if (!res.ok && res.status !== 404) throw new RemoteApiError(res.status, `POST ${path}`, await res.text());
    return res;
  }

  async function postResult(runId: string, body: Record<string, unknown>) {
    const res = await post(`/api/v1/runs/${encodeURIComponent(runId)}/analysis`, body);
    if (res.status === 404) return { recorded: false as const, reason: 'not-found' };
    const answer = ResultAnswer.parse(await res.json());
    return answer.recorded ? { recorded: true as const } : { recorded: false as const, reason: answer.reason ?? 'refused' };
  }

  async function download(runId: string, sha256: string): Promise<BundleHandle> {
    const path = `/api/v1/runs/${encodeURIComponent(runId)}/bundle`;
    const res = await doFetch(`${opts.apiUrl}${path}`, { headers: auth });
    if (!res.ok || !res.body) throw new RemoteApiError(res.status, `GET ${path}`, res.body ? await res.text() : 'no body');
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-bundle-'));
    const release = () => rm(dir, { recursive: true, force: true });
    const file = join(dir, 'bundle');
    const hash = createHash('sha256');
    const hashing = new Transform({
      transform(chunk: Buffer, _enc, done) {
        hash.update(chunk);
        done(null, chunk);
      },
    });
    try {
      await pipeline(Readable.fromWeb(res.body as import('node:stream/web').ReadableStream<Uint8Array>), hashing, createWriteStream(file));
      const got = hash.digest('hex');
      if (got !== sha256) throw new Error(`downloaded bundle of run ${runId} has SHA-256 ${got}, not ${sha256}`);
    } catch (err) {
      await release();
      throw err;
    }
    return { path: file, release };
  }

  return {
    async start(runId, jobKey, policyName): Promise<StartOutcome> {
      const res = await post(`/api/v1/runs/${encodeURIComponent(runId)}/analysis/start`, { job_key: jobKey, policy: policyName });
      if (res.status === 404) return { started: false, reason: 'not-found' };
      const a = StartAnswer.parse(await res.json());
      if (a.started && a.sha256 && a.policy) return { started: true, sha256: a.sha256, policy: a.policy };
      if (a.reason === 'unknown-policy') return { started: false, reason: 'unknown-policy', message: a.message ?? `unknown policy ${policyName}` };
      return { started: false, reason: 'stale' };
    },
    async bundle(runId, sha256) {
      const local = opts.blobPathOf?.(sha256);
      if (local && existsSync(local)) return { path: local, release: async () => undefined };
      return download(runId, sha256);
    },
    record(runId, jobKey, report, repairedCsvGz) {
      return postResult(runId, {
        job_key: jobKey,
        report,
        ...(repairedCsvGz ? { repaired_csv_gz_base64: Buffer.from(repairedCsvGz.buffer, repairedCsvGz.byteOffset, repairedCsvGz.byteLength).toString('base64') } : {}),
      });
    },
    async reject(runId, jobKey, rejection) {
      await postResult(runId, { job_key: jobKey, rejected: rejection });
    },
    async fail(runId, jobKey, reason) {
      await postResult(runId, { job_key: jobKey, failed: { reason: reason.slice(0, 2000) } });
    },
  };
}
