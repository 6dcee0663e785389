import { Worker } from 'node:worker_threads';
import type { ImuColumns } from '@plumbline/bundle';
import type { Policy } from '@plumbline/contracts';
import type { GeometryInput, GeometryResult } from '../geometry-part.ts';
import type { ImuNorms } from '../report/series.ts';
import type { HelperRequest } from './helper-thread.ts';

const BOOT = new URL('./thread-boot.mjs', import.meta.url);
const ENTRY = new URL('./helper-thread.ts', import.meta.url).href;

type Pending = { resolve(r: unknown): void; reject(e: Error): void };
type Reply = { id: number; result?: unknown; error?: { name: string; message: string } };
/** A request without its id (distributes over the union). */
type Request = HelperRequest extends infer R ? (R extends HelperRequest ? Omit<R, 'id'> : never) : never;

/**
 * One helper thread per calling thread, started on first use and kept; it holds the process open only while a request
 * is out. Requests are answered in order; a thread that dies fails what it had and is replaced on the next request.
 */
let slot: { worker: Worker; pending: Map<number, Pending> } | null = null;
let nextId = 1;

function spawn(): NonNullable<typeof slot> {
  const pending = new Map<number, Pending>();
  const worker = new Worker(BOOT, { workerData: { entry: ENTRY } });
  worker.unref();
  const mine = { worker, pending };
  worker.on('message', (m: Reply) => {
    const p = pending.get(m.id);
    pending.delete(m.id);
    if (pending.size === 0) worker.unref();
    if (m.error) p?.reject(Object.assign(new Error(m.error.message), { name: m.error.name }));
    else if (m.result) p?.resolve(m.result);
  });
  const fail = (err: Error) => {
    for (const p of pending.values()) p.reject(err);
    pending.clear();
    if (slot === mine) slot = null;
  };
  worker.on('error', fail);
  worker.on('exit', (code) => fail(new Error(`analysis helper thread exited with code ${code}`)));
  slot = mine;
  return mine;
}

/** Starts the helper thread ahead of use (its start-up then overlaps the bundle read). */
export function warmGeometryThread(): void {
  if (!slot) spawn();
}

/**
 * Sends one request to the helper thread. The promise never goes unobserved: callers that fail before awaiting it
 * leave no unhandled rejection.
 */
function ask<T>(request: Request): Promise<T> {
  const s = slot ?? spawn();
  const id = nextId++;
  const answer = new Promise<T>((resolve, reject) => {
    // held open while a request is out, so a process awaiting only this answer does not exit
    if (s.pending.size === 0) s.worker.ref();
    s.pending.set(id, { resolve: resolve as (r: unknown) => void, reject });
    s.worker.postMessage({ ...request, id });
  });
  answer.catch(() => undefined);
  return answer;
}

/**
 * `analyzeGeometry` in the helper thread. Columns on SharedArrayBuffer are shared, others are copied. Equal input gives
 * the same result as the call in this thread.
 */
export function analyzeGeometryInThread(input: GeometryInput, policy: Policy): Promise<GeometryResult> {
  return ask<GeometryResult>({ kind: 'geometry', input, policy });
}

/** `imuNormSeries` in the helper thread (after any geometry request before it). */
export function imuNormsInThread(imu: ImuColumns, t0: number): Promise<ImuNorms> {
  return ask<ImuNorms>({ kind: 'imu-norms', imu, t0 });
}
