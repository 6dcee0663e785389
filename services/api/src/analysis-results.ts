import { Readable } from 'node:stream';
import type { Logger } from 'pino';
import { maintenanceFindings, mergeGate } from '@plumbline/analysis';
import type { Policy, Report } from '@plumbline/contracts';
import { loadPolicy } from '@plumbline/config';
import { recordFleetFollowUp, type BlobStore, type RecordOutcome, type Store } from '@plumbline/store';

/**
 * Results posted by remote workers (workers on other hosts, without the database) are recorded here, with the same
 * effects as a worker on this host: the report exactly once under the job key, the `run.analysed` webhook, the robot's
 * maintenance findings and `run.merge-ready`. Kept in step with services/worker (ledger/local-ledger.ts); the fleet
 * follow-up itself is the store's `recordFleetFollowUp`, shared with the worker.
 */

/**
 * The policy of a job by name: `name@version` is a stored version; null, `default` or the configured policy's name
 * is the configured policy (else the built-in default); any other bare name is the latest stored version.
 */
export function createApiPolicyResolver(store: Store, policyFile: string | null): (name: string | null) => Policy | null {
  const configured = loadPolicy(policyFile);
  return (name) => {
    if (name === null || name === 'default' || name === configured.name) return configured;
    const at = name.lastIndexOf('@');
    if (at > 0) return store.policies.get(name.slice(0, at), name.slice(at + 1))?.policy ?? null;
    return store.policies.get(name)?.policy ?? null;
  };
}

export interface ResultDeps {
  store: Store;
  blobs: BlobStore;
  clock: { now(): Date };
  logger: Logger;
}

/** Stores the gzipped trajectory, records the report, queues the webhooks; removes the trajectory blob when refused. */
export async function recordPostedResult(deps: ResultDeps, runId: string, jobKey: string, report: Report, repairedCsvGz: Buffer | null): Promise<RecordOutcome> {
  const { store, blobs } = deps;
  const csv = repairedCsvGz ? await blobs.writeStream(Readable.from([repairedCsvGz]), { maxBytes: Number.MAX_SAFE_INTEGER }) : null;
  const outcome = store.reports.recordAnalysis(runId, report, jobKey, { repairedCsvSha256: csv?.sha256 ?? null });
  if (!outcome.recorded) {
    if (csv) await blobs.remove(csv.sha256, { isReferenced: (sha) => store.runs.blobReferenced(sha) });
    return outcome;
  }
  const now = deps.clock.now();
  store.webhooks.enqueueEvent(
    'run.analysed',
    { event: 'run.analysed', at: now.toISOString(), run: store.runs.get(runId), report: { score: report.score, verdict: report.verdict, flags: report.flags.length } },
    now,
  );
  afterRecorded(deps, runId, now);
  return outcome;
}

/** Marks the run rejected (bad bundle data found by the analysis) under the job key and queues `run.analysed`. */
export function recordRejection(
  deps: ResultDeps,
  runId: string,
  jobKey: string,
  r: { reason: string; code: string | null; file: string | null; line: number | null; column: number | null },
): boolean {
  const { store } = deps;
  if (!store.runs.markRejected(runId, jobKey, r.reason)) return false;
  store.audit.append('worker', 'run.rejected', runId, { code: r.code, file: r.file, line: r.line, column: r.column, reason: r.reason });
  const now = deps.clock.now();
  store.webhooks.enqueueEvent('run.analysed', { event: 'run.analysed', at: now.toISOString(), run: store.runs.get(runId), report: null }, now);
  return true;
}

/** Maintenance findings of the robot and the merge gate after a recorded report; a failure is logged, never undoes it. */
function afterRecorded(deps: ResultDeps, runId: string, now: Date): void {
  try {
    recordFleetFollowUp(deps.store, { maintenanceFindings, mergeGate }, runId, now);
  } catch (err) {
    deps.logger.warn({ err, runId }, 'fleet follow-up after analysis failed');
  }
}
