/**
 * Runs inside a worker thread: analyses bundles on request so the CPU-bound analysis never blocks the event loop of
 * the process that serves HTTP. Messages: `{ id, path, policy, twoThreads }` in; `{ id, result: { report,
 * repairedCsvGz } }` or `{ id, error }` out (the gzipped trajectory bytes are transferred, not copied).
 */
import { parentPort } from 'node:worker_threads';
import { threadErrorOf } from '@plumbline/analysis';
import type { Policy } from '@plumbline/contracts';
import { analyseWithTrajectory } from './analysis-output.ts';

export interface ThreadRequest {
  id: number;
  path: string;
  policy: Policy;
  twoThreads?: boolean;
}

const port = parentPort;
if (!port) throw new Error('analysis-thread.ts must run in a worker thread');
port.on('message', (req: ThreadRequest) => {
  analyseWithTrajectory(req.path, req.policy, { parallel: req.twoThreads ?? false }).then(
    ({ report, repairedCsvGz }) => {
      const gz = repairedCsvGz ? new Uint8Array(repairedCsvGz) : null;
      port.postMessage({ id: req.id, result: { report, repairedCsvGz: gz } }, gz ? [gz.buffer] : []);
    },
    (err: unknown) => port.postMessage({ id: req.id, error: threadErrorOf(err) }),
  );
});
