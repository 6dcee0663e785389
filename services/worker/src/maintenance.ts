import type { Logger } from 'pino';
import type { BlobStore, Store } from '@plumbline/store';

/** Temp files untouched this long are leftovers of crashed writes or abandoned sessions (sessions live 24 h). */
const TEMP_MAX_AGE_MS = 48 * 3600 * 1000;

/**
 * One housekeeping pass: aborts upload sessions past their expiry and deletes their bytes, then removes stale temp
 * files. Idempotent, so several workers may run it. Returns what it removed.
 */
export async function sweepUploads(store: Store, blobs: BlobStore, now: Date): Promise<{ sessions: number; tempFiles: number }> {
  let sessions = 0;
  for (const s of store.uploads.expired(now, 500)) {
    if (store.uploads.abort(s.id)) sessions++;
    await blobs.removeTemp(s.temp_path);
  }
  const tempFiles = await blobs.sweep(TEMP_MAX_AGE_MS, now);
  return { sessions, tempFiles };
}

/** Runs `sweepUploads` now and then every `intervalMs`; returns a stop function. */
export function startMaintenance(deps: { store: Store; blobs: BlobStore; logger: Logger; clock: { now(): Date } }, intervalMs = 10 * 60_000): () => void {
  const pass = () =>
    sweepUploads(deps.store, deps.blobs, deps.clock.now()).then(
      (r) => {
        if (r.sessions + r.tempFiles > 0) deps.logger.info(r, 'expired uploads removed');
      },
      (err: unknown) => deps.logger.error({ err }, 'upload sweep failed'),
    );
  void pass();
  const timer = setInterval(() => void pass(), intervalMs);
  timer.unref();
  return () => clearInterval(timer);
}
