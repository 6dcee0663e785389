/**
 * Runs inside a worker thread: analyses bundles on request so the CPU-bound analysis never blocks the event loop of
 * the process that serves HTTP. Messages: `{ id, path, policy, twoThreads }` in; `{ id, report, repairedCsvGz }` or `{ id, error }`
 * out (the gzipped trajectory bytes are transferred, not copied).
 */
import { parentPort } from 'node:worker_threads';
import type { Policy } from '@plumbline/contracts';
import { analyseWithTrajectory } from './analysis-output.ts';

export interface ThreadRequest {
  id: number;
  path: string;
  policy: Policy;
  twoThreads?: boolean;
}

/** An error as it crosses the thread boundary; bundle errors keep their code and location. */
export interface ThreadError {
  name: string;
  message: string;
  code?: string;
  file?: string | null;
  line?: number | null;
  column?: number | null;
}

const port = parentPort;
if (!port) throw new Error('analysis-thread.ts must run in a worker thread');
port.on('message', (req: ThreadRequest) => {
  analyseWithTrajectory(req.path, req.policy, { parallel: req.twoThreads ?? false }).then(
    ({ report, repairedCsvGz }) => {
      const gz = repairedCsvGz ? new Uint8Array(repairedCsvGz) : null;
      port.postMessage({ id: req.id, report, repairedCsvGz: gz }, gz ? [gz.buffer] : []);
    },
    (err: unknown) => {
      const e = err as Error & Omit<ThreadError, 'name' | 'message'>;
      const error: ThreadError = { name: e.name ?? 'Error', message: e.message ?? String(err), code: e.code, file: e.file, line: e.line, column: e.column };
      port.postMessage({ id: req.id, error });
    },
  );
});
