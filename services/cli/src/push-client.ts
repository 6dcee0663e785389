import { open, stat } from 'node:fs/promises';
import { inspectBundle } from '@plumbline/bundle';
import type { RunSummary, UploadSession } from '@plumbline/contracts';
import { hashFile, packDirectory } from './pack.ts';

/** The server refused the upload (4xx): retrying cannot help. Carries the problem+json body. */
export class PushRefusedError extends Error {
  override readonly name = 'PushRefusedError';
  constructor(
    readonly status: number,
    readonly problem: Record<string, unknown>,
  ) {
    const where = problem.file ? ` (${[problem.file, problem.line, problem.column].filter((x) => x != null).join(':')})` : '';
    super(`${status} ${String(problem.code ?? '')}: ${String(problem.detail ?? problem.title ?? 'refused')}${where}`);
  }
}

/** The server could not be reached (or kept failing) within the retry budget. */
export class PushUnavailableError extends Error {
  override readonly name = 'PushUnavailableError';
}

export interface PushOptions {
  bundle: string;
  server: string;
  token: string;
  chunkBytes?: number;
  /** Consecutive failed attempts tolerated per step before giving up (default 6). */
  maxRetries?: number;
  baseDelayMs?: number;
  onProgress?: (sentBytes: number, totalBytes: number) => void;
  onNotice?: (line: string) => void;
  fetch?: typeof fetch;
}

export interface PushResult {
  run: RunSummary;
  created: boolean;
  sha256: string;
  sizeBytes: number;
}

type Attempt<T> = { ok: true; value: T } | { ok: false; retry: true; why: string };

/** HTTP calls of the upload protocol, with the retry rule: network errors, 5xx and 429 retry; other 4xx end it. */
class UploadClient {
  private readonly base: string;
  private readonly doFetch: typeof fetch;
  constructor(private readonly opts: PushOptions) {
    this.base = opts.server.replace(/\/+$/, '');
    this.doFetch = opts.fetch ?? fetch;
  }

  async call<T>(method: string, path: string, body?: BodyInit, contentType?: string): Promise<Attempt<T>> {
    let res: Response;
    try {
      res = await this.doFetch(`${this.base}${path}`, {
        method,
        headers: { authorization: `Bearer ${this.opts.token}`, ...(contentType ? { 'content-type': contentType } : {}) },
        ...(body !== undefined ? { body } : {}),
        signal: AbortSignal.timeout(120_000),
      });
    } catch (err) {
      return { ok: false, retry: true, why: (err as Error).message };
    }
    const text = await res.text();
    const json = text ? (JSON.parse(text) as Record<string, unknown>) : {};
    if (res.ok) return { ok: true, value: json as T };
    if (res.status >= 500 || res.status === 429) return { ok: false, retry: true, why: `HTTP ${res.status}` };
    // An offset mismatch is an answer, not a failure: it tells where to continue.
    if (res.status === 409 && typeof json.expected_offset === 'number') return { ok: true, value: json as T };
    throw new PushRefusedError(res.status, json);
  }

  /** Repeats `attempt` with exponential backoff (base delay doubling, capped at 30 s) until it succeeds. */
  async withRetry<T>(what: string, attempt: () => Promise<Attempt<T>>, beforeRetry?: () => Promise<void>): Promise<T> {
    const max = this.opts.maxRetries ?? 6;
    for (let n = 0; ; n++) {
      const r = await attempt();
      if (r.ok) return r.value;
      if (n >= max) throw new PushUnavailableError(`${what} failed ${n + 1} times (last: ${r.why})`);
      const delay = Math.min(30_000, (this.opts.baseDelayMs ?? 500) * 2 ** n);
      this.opts.onNotice?.(`${what} failed (${r.why}); retrying in ${(delay / 1000).toFixed(1)} s`);
      await new Promise((resolve) => setTimeout(resolve, delay));
      await beforeRetry?.();
    }
  }
}

/** Sends the bytes of `archive` from the session's offset to the end, re-reading the offset after failures. */
async function sendChunks(client: UploadClient, session: UploadSession, archive: string, opts: PushOptions): Promise<void> {
  const size = session.size_bytes;
  let offset = session.received_bytes;
  const refresh = async () => {
    const s = await client.call<UploadSession>('GET', `/api/v1/uploads/${session.id}`);
    if (s.ok) offset = s.value.received_bytes;
  };
  const fh = await open(archive, 'r');
  try {
    const buf = Buffer.alloc(Math.max(1, Math.min(opts.chunkBytes ?? 8 * 1024 * 1024, size)));
    opts.onProgress?.(offset, size);
    while (offset < size) {
      const s = await client.withRetry(
        `sending bytes from ${offset}`,
        async () => {
          const { bytesRead } = await fh.read(buf, 0, Math.min(buf.length, size - offset), offset);
          const url = `/api/v1/uploads/${session.id}?offset=${offset}`;
          return client.call<UploadSession & { expected_offset?: number }>('PUT', url, buf.subarray(0, bytesRead), 'application/octet-stream');
        },
        refresh,
      );
      offset = typeof s.expected_offset === 'number' ? s.expected_offset : s.received_bytes;
      opts.onProgress?.(offset, size);
    }
  } finally {
    await fh.close();
  }
}

/**
 * Resumable upload of a bundle (directory or archive): open a session with size and SHA-256, send chunks at the
 * offset the server holds, learn that offset again after any failure, then finish. Network errors, 5xx and 429 are
 * retried with exponential backoff; other 4xx answers end the push with the server's problem details.
 */
export async function pushBundle(opts: PushOptions): Promise<PushResult> {
  const isDir = (await stat(opts.bundle)).isDirectory();
  const packed = isDir ? await packDirectory(opts.bundle) : null;
  const archive = packed?.path ?? opts.bundle;
  try {
    // Checked here first so a bad bundle fails with its file, line and column before any byte is sent.
    const { manifest } = await inspectBundle(archive);
    const { sha256, sizeBytes } = packed ?? (await hashFile(archive));
    const client = new UploadClient(opts);
    const body = JSON.stringify({ robot_id: manifest.robot_id, run_id: manifest.run_id, size_bytes: sizeBytes, sha256 });
    const session = await client.withRetry('opening the upload', () => client.call<UploadSession>('POST', '/api/v1/uploads', body, 'application/json'));
    await sendChunks(client, session, archive, opts);
    const done = await client.withRetry('finishing the upload', () =>
      client.call<{ run: RunSummary; created: boolean }>('POST', `/api/v1/uploads/${session.id}/finish`),
    );
    return { ...done, sha256, sizeBytes };
  } finally {
    await packed?.cleanup();
  }
}
