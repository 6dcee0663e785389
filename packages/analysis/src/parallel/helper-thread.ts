/**
 * Runs inside a worker thread: the parts of one run's analysis that the helper takes, on request.
 * - `geometry`: GNSS comparison, loop consistency and pose graph (`analyzeGeometry`);
 * - `imu-norms`: the report's IMU magnitude series (`imuNormSeries`).
 * Messages: `{ id, kind, ... }` in, `{ id, result }` or `{ id, error }` out. Columns on SharedArrayBuffer arrive
 * without a copy; results are plain data (structured clone keeps every double bit for bit).
 */
import { parentPort } from 'node:worker_threads';
import type { ImuColumns } from '@plumbline/bundle';
import type { Policy } from '@plumbline/contracts';
import { analyzeGeometry, type GeometryInput } from '../geometry-part.ts';
import { imuNormSeries } from '../report/series.ts';
import { threadErrorOf } from './thread-client.ts';

export type HelperRequest =
  | { id: number; kind: 'geometry'; input: GeometryInput; policy: Policy }
  | { id: number; kind: 'imu-norms'; imu: ImuColumns; t0: number };

const port = parentPort;
if (!port) throw new Error('helper-thread.ts must run in a worker thread');
port.on('message', (req: HelperRequest) => {
  try {
    const result = req.kind === 'geometry' ? analyzeGeometry(req.input, req.policy) : imuNormSeries(req.imu, req.t0);
    port.postMessage({ id: req.id, result });
  } catch (err) {
    port.postMessage({ id: req.id, error: threadErrorOf(err) });
  }
});
