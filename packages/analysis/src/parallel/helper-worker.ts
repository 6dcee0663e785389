import type { ImuColumns } from '@plumbline/bundle';
import type { Policy } from '@plumbline/contracts';
import type { GeometryInput, GeometryResult } from '../geometry-part.ts';
import type { ImuNorms } from '../report/series.ts';
import { createThreadClient } from './thread-client.ts';

/** One helper thread per calling thread, started on first use and kept; requests are answered in order. */
const helper = createThreadClient(
  new URL('./helper-thread.ts', import.meta.url),
  'analysis helper thread',
  (e) => Object.assign(new Error(e.message), { name: e.name }),
);

/** Starts the helper thread ahead of use (its start-up then overlaps the bundle read). */
export function warmGeometryThread(): void {
  helper.warm();
}

/**
 * `analyzeGeometry` in the helper thread. Columns on SharedArrayBuffer are shared, others are copied. Equal input gives
 * the same result as the call in this thread.
 */
export function analyzeGeometryInThread(input: GeometryInput, policy: Policy): Promise<GeometryResult> {
  return helper.ask<GeometryResult>({ kind: 'geometry', input, policy });
}

/** `imuNormSeries` in the helper thread (after any geometry request before it). */
export function imuNormsInThread(imu: ImuColumns, t0: number): Promise<ImuNorms> {
  return helper.ask<ImuNorms>({ kind: 'imu-norms', imu, t0 });
}
