import { basename } from 'node:path';
import type { RunManifest, RunSummary } from '@plumbline/contracts';
import type { BlobInfo, Store } from '@plumbline/store';
import type { JobQueue } from '@plumbline/queue';
import type { AppDeps } from './context.ts';
import { actorOf, type Principal } from './plugins/auth.ts';
import { AppError, errors } from './errors.ts';

/**
 * Starts a new analysis generation of a run and enqueues it. The job key doubles as the queue job id, so a
 * re-enqueue of the same generation (restart, retry of the HTTP call) is a no-op in the queue.
 */
export async function requestAnalysis(store: Store, queue: JobQueue, runId: string, policy?: string | null): Promise<boolean> {
  const ticket = store.runs.requestAnalysis(runId, { policy: policy ?? null });
  if (!ticket) return false;
  await queue.enqueue(
    { run: ticket.run, sha256: ticket.sha256, attempt_tag: ticket.job_key, ...(ticket.policy ? { policy: ticket.policy } : {}) },
    { jobId: ticket.job_key },
  );
  return true;
}

/** The archive name the streaming upload check gives in its errors (relabelled like a storage name). */
export const UPLOAD_NAME = 'upload';

/** The result of the upload check made while the bytes arrived; null when the stored file must be inspected. */
export type Inspected = () => Promise<{ manifest: RunManifest } | null>;

/**
 * Archive-level bundle errors name the archive by its file name, which on the server is an internal content
 * address; the client knows it as the upload. Such errors are re-labelled `file: "(upload)"`.
 */
function withoutStorageName(e: unknown, path: string): unknown {
  const b = e as { name?: string; file?: string | null; message?: string; code?: string; line?: number | null; column?: number | null };
  const name = b?.file === UPLOAD_NAME ? UPLOAD_NAME : basename(path);
  if (b?.name !== 'BundleError' || b.file !== name) return e;
  const detail = String(b.message).startsWith(`${name}: `) ? String(b.message).slice(name.length + 2) : String(b.message);
  return errors.BUNDLE_INVALID(`the uploaded archive: ${detail}`).with({ bundle_code: b.code, file: '(upload)' });
}

/**
 * After a bundle is stored: check its manifest, create the run (`received`), enqueue it (`queued`).
 * Archive and manifest problems are refused here with 422 (nothing is stored as a run); problems inside the data
 * streams are found by the analysis, which then marks the run `rejected` with the reason.
 * Idempotent on (robot_id, run_id, sha256); the same run id with other content is a 409. A refused bundle's blob is
 * removed when no run references it.
 */
export async function ingestBlob(
  deps: Pick<AppDeps, 'store' | 'queue' | 'inspectBundle' | 'blobs'>,
  principal: Principal,
  blob: BlobInfo,
  declared?: { robot_id: string; run_id: string },
  inspected?: Inspected,
): Promise<{ run: RunSummary; created: boolean }> {
  try {
    return await createRun(deps, principal, blob, declared, inspected);
  } catch (err) {
    // A refused bundle (bad archive or manifest, another robot's run, conflicting content) leaves nothing behind: its
    // blob goes unless a run references the same bytes. A transient failure keeps it: a retried finish needs it.
    if (isRefusal(err)) await deps.blobs.remove(blob.sha256, { isReferenced: (sha) => deps.store.runs.blobReferenced(sha) }).catch(() => undefined);
    throw err;
  }
}

/** A refusal of the bundle itself (4xx, bundle or conflict error), as opposed to a transient failure worth a retry. */
export function isRefusal(e: unknown): boolean {
  if (e instanceof AppError) return e.statusCode < 500;
  const name = (e as Error | undefined)?.name;
  return name === 'BundleError' || name === 'RunConflictError';
}

async function createRun(
  deps: Pick<AppDeps, 'store' | 'queue' | 'inspectBundle'>,
  principal: Principal,
  blob: BlobInfo,
  declared?: { robot_id: string; run_id: string },
  inspected?: Inspected,
): Promise<{ run: RunSummary; created: boolean }> {
  const inspect = async () => (await inspected?.()) ?? (await deps.inspectBundle(blob.path));
  const { manifest } = await inspect().catch((e: unknown) => {
    throw withoutStorageName(e, blob.path);
  });
  if (principal.role === 'robot' && manifest.robot_id !== principal.robotId) {
    throw errors.ROBOT_MISMATCH(principal.robotId ?? '(none)', manifest.robot_id).with({ file: 'run.json' });
  }
  if (declared && (declared.robot_id !== manifest.robot_id || declared.run_id !== manifest.run_id)) {
    throw errors.BUNDLE_INVALID(
      `run.json names ${manifest.robot_id}/${manifest.run_id} but the upload session was opened for ${declared.robot_id}/${declared.run_id}`,
    ).with({ file: 'run.json' });
  }
  const { run, created } = deps.store.runs.create({
    robot_id: manifest.robot_id,
    run_id: manifest.run_id,
    site: manifest.site,
    started_at: manifest.started_at,
    sha256: blob.sha256,
    size_bytes: blob.sizeBytes,
    manifest,
  });
  if (created) deps.store.audit.append(actorOf(principal), 'run.received', run.id, { sha256: blob.sha256, size_bytes: blob.sizeBytes });
  // A run left `received` (crash between create and enqueue) is enqueued by its next identical upload.
  if (created || run.status === 'received') await requestAnalysis(deps.store, deps.queue, run.id);
  return { run: deps.store.runs.get(run.id) ?? run, created };
}
