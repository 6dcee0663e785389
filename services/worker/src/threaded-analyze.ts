import { createThreadClient, type ThreadError } from '@plumbline/analysis';
import type { AnalysisOutput } from './analysis-output.ts';
import type { Analyze } from './processors/analyse-run.ts';

const ENTRY = new URL('./analysis-thread.ts', import.meta.url);

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
  const clients = Array.from({ length: Math.max(1, threads) }, () =>
    createThreadClient(ENTRY, 'analysis thread', (e) => new ThreadedAnalysisError(e)),
  );
  let turn = 0;
  return {
    analyze(path, policy) {
      const client = clients[turn++ % clients.length]!;
      return client.ask<AnalysisOutput>({ path, policy, twoThreads });
    },
    async close() {
      await Promise.all(clients.map((c) => c.close()));
    },
  };
}
