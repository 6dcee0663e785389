/**
 * Runs inside a worker thread: the geometry part of one run's analysis (GNSS comparison, loop consistency and pose
 * graph), on request. Messages: `{ id, input, policy }` in, `{ id, result }` or `{ id, error }` out. Columns on
 * SharedArrayBuffer arrive without a copy; the result is plain data (structured clone keeps every double bit for bit).
 */
import { parentPort } from 'node:worker_threads';
import type { Policy } from '@plumbline/contracts';
import { analyzeGeometry, type GeometryInput } from '../geometry-part.ts';

export interface GeometryRequest {
  id: number;
  input: GeometryInput;
  policy: Policy;
}

const port = parentPort;
if (!port) throw new Error('geometry-thread.ts must run in a worker thread');
port.on('message', (req: GeometryRequest) => {
  try {
    port.postMessage({ id: req.id, result: analyzeGeometry(req.input, req.policy) });
  } catch (err) {
    const e = err as Error;
    port.postMessage({ id: req.id, error: { name: e?.name ?? 'Error', message: e?.message ?? String(err) } });
  }
});
