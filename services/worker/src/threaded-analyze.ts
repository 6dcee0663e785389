import { Worker } from 'node:worker_threads';
import type { Report } from '@plumbline/contracts';
import type { AnalysisOutput } from './analysis-output.ts';
import type { Analyze } from './processors/analyse-run.ts';
import type { ThreadError } from './analysis-thread.ts';

const BOOT = new URL('./thread-boot.mjs', import.meta.url);
const ENTRY = new URL('./analysis-thread.ts', import.meta.url).href;

/** An error rebuilt from the thread, with the same name, code and location (so BundleError stays recognisable). */
export class ThreadedAnalysisError extends Error {
  readonly code: string | undefined;
  readonly file: string | null;
  readonly line: number | null;
  readonly column: number | null;
  constructor(e: ThreadError) {
    super(e.message);
    this.name = e.name;
    this.code = e.code;
    this.file = e.file ?? null;
    this.line = e.line ?? null;
    this.column = e.column ?? null;
  }
}

export interface ThreadedAnalyze {
  analyze: Analyze;
  close(): Promise<void>;
}

/**
 * `threads` worker threads running the analysis, requests handed out round-robin. A thread that dies fails its
 * pending requests (the queue retries them) and is replaced on the next request. With `twoThreads`, each analysis
 * uses one more thread of its own for GNSS, loops and pose graph (see analyzeRunParallel).
 */
export function createThreadedAnalyze(threads = 1, options: { twoThreads?: boolean } = {}): ThreadedAnalyze {
  const twoThreads = options.twoThreads ?? false;
  type Pending = { resolve(r: AnalysisOutput): void; reject(e: Error): void };
  const slots: Array<{ worker: Worker; pending: Map<number, Pending> } | null> = Array.from({ length: Math.max(1, threads) }, () => null);
  let nextId = 1;
  let turn = 0;

  function spawn(i: number) {
    const pending = new Map<number, Pending>();
    const worker = new Worker(BOOT, { workerData: { entry: ENTRY } });
    worker.unref();
    worker.on('message', (m: { id: number; report?: Report; repairedCsvGz?: Uint8Array | null; error?: ThreadError }) => {
      const p = pending.get(m.id);
      pending.delete(m.id);
      if (m.error) p?.reject(new ThreadedAnalysisError(m.error));
      else if (m.report) p?.resolve({ report: m.report, repairedCsvGz: m.repairedCsvGz ?? null });
    });
    const fail = (err: Error) => {
      for (const p of pending.values()) p.reject(err);
      pending.clear();
      slots[i] = null;
    };
    worker.on('error', fail);
    worker.on('exit', (code) => fail(new Error(`analysis thread exited with code ${code}`)));
    const slot = { worker, pending };
    slots[i] = slot;
    return slot;
  }

  return {
    analyze(path, policy) {
      const i = turn++ % slots.length;
      const slot = slots[i] ?? spawn(i);
      const id = nextId++;
      return new Promise<AnalysisOutput>((resolve, reject) => {
        slot.pending.set(id, { resolve, reject });
        slot.worker.postMessage({ id, path, policy, twoThreads });
      });
    },
    async close() {
      await Promise.all(slots.map((s) => s?.worker.terminate()));
    },
  };
}
