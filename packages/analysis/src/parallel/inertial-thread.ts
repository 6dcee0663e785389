/**
 * Runs inside a worker thread: the inertial estimators of one run, on request. Messages:
 * `{ id, input, options }` in, `{ id, result }` or `{ id, error }` out. Columns on SharedArrayBuffer arrive without a
 * copy; the result is plain data (structured clone keeps every double bit for bit).
 */
import { parentPort } from 'node:worker_threads';
import { analyzeInertial, type InertialInput, type InertialOptions } from '../estimators/inertial.ts';

export interface InertialRequest {
  id: number;
  input: InertialInput;
  options: InertialOptions;
}

const port = parentPort;
if (!port) throw new Error('inertial-thread.ts must run in a worker thread');
port.on('message', (req: InertialRequest) => {
  try {
    port.postMessage({ id: req.id, result: analyzeInertial(req.input, req.options) });
  } catch (err) {
    const e = err as Error;
    port.postMessage({ id: req.id, error: { name: e?.name ?? 'Error', message: e?.message ?? String(err) } });
  }
});
