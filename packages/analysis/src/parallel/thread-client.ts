import { Worker } from 'node:worker_threads';

const BOOT = new URL('./thread-boot.mjs', import.meta.url);

/** An error as it crosses a thread boundary; bundle errors keep their code and location. */
export interface ThreadError {
  name: string;
  message: string;
  code?: string;
  file?: string | null;
  line?: number | null;
  column?: number | null;
}

/** The thread side: what a caught error becomes in a `{ id, error }` reply. */
export function threadErrorOf(err: unknown): ThreadError {
  const e = err as Error & Omit<ThreadError, 'name' | 'message'>;
  return { name: e?.name ?? 'Error', message: e?.message ?? String(err), code: e?.code, file: e?.file, line: e?.line, column: e?.column };
}

/** A thread that answers `{ id, ...request }` with `{ id, result }` or `{ id, error: ThreadError }`. */
export interface ThreadClient {
  /** Starts the thread now, ahead of the first request. */
  warm(): void;
  /**
   * Sends one request (`transfer` lists buffers moved, not copied). The promise never goes unobserved: a caller that
   * fails before awaiting it leaves no unhandled rejection.
   */
  ask<T>(request: object, transfer?: readonly ArrayBuffer[]): Promise<T>;
  close(): Promise<void>;
}

/**
 * A request/response client for a TypeScript thread entry (loaded through thread-boot.mjs, which registers the
 * loader). The thread starts on first use; it holds the process open only while a request is out. A thread that
 * dies fails what it had and is replaced on the next request. `toError` rebuilds the thread's errors.
 */
export function createThreadClient(entry: URL, label: string, toError: (e: ThreadError) => Error): ThreadClient {
  type Pending = { resolve(r: unknown): void; reject(e: Error): void };
  let slot: { worker: Worker; pending: Map<number, Pending> } | null = null;
  let nextId = 1;

  function spawn(): NonNullable<typeof slot> {
    const pending = new Map<number, Pending>();
    const worker = new Worker(BOOT, { workerData: { entry: entry.href } });
    worker.unref();
    const mine = { worker, pending };
    worker.on('message', (m: { id: number; result?: unknown; error?: ThreadError }) => {
      const p = pending.get(m.id);
      pending.delete(m.id);
      if (pending.size === 0) worker.unref();
      if (m.error) p?.reject(toError(m.error));
      else p?.resolve(m.result);
    });
    const fail = (err: Error) => {
      for (const p of pending.values()) p.reject(err);
      pending.clear();
      if (slot === mine) slot = null;
    };
    worker.on('error', fail);
    worker.on('exit', (code) => fail(new Error(`${label} exited with code ${code}`)));
    slot = mine;
    return mine;
  }

  return {
    warm() {
      if (!slot) spawn();
    },
    ask<T>(request: object, transfer: readonly ArrayBuffer[] = []) {
      const s = slot ?? spawn();
      const id = nextId++;
      const answer = new Promise<T>((resolve, reject) => {
        // held open while a request is out, so a process awaiting only this answer does not exit
        if (s.pending.size === 0) s.worker.ref();
        s.pending.set(id, { resolve: resolve as (r: unknown) => void, reject });
        s.worker.postMessage({ ...request, id }, [...transfer]);
      });
      answer.catch(() => undefined);
      return answer;
    },
    async close() {
      const s = slot;
      slot = null;
      await s?.worker.terminate();
    },
  };
}
