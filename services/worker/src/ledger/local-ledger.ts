import { Readable } from 'node:stream';
import type { Policy } from '@plumbline/contracts';
import type { BlobStore, Store } from '@plumbline/store';
import type { AnalysisLedger } from './ledger.ts';

export interface LocalLedgerDeps {
  store: Store;
  blobs: BlobStore;
  policyFor: (name: string | null) => Policy | null;
  clock: { now(): Date };
  /** Follow-up after a report is recorded (fleet maintenance findings, merge-ready webhook). */
  afterRecorded?: (runId: string, now: Date) => void;
}

/** The ledger of a worker on the API's host: the shared SQLite store and blob directory. */
export function createLocalLedger(deps: LocalLedgerDeps): AnalysisLedger {
  const { store, blobs } = deps;
  const guard = { isReferenced: (sha: string) => store.runs.blobReferenced(sha) };
  return {
    async start(runId, jobKey, policyName) {
      const run = store.runs.get(runId);
      if (!run) return { started: false, reason: 'not-found' };
      if (!store.runs.markAnalysing(runId, jobKey)) return { started: false, reason: 'stale' };
      const policy = deps.policyFor(policyName);
      if (!policy) {
        const message = `unknown policy ${policyName}`;
        store.runs.markFailed(runId, jobKey, message);
        return { started: false, reason: 'unknown-policy', message };
      }
      return { started: true, sha256: run.sha256, policy };
    },
    async bundle(_runId, sha256) {
      return { path: blobs.pathOf(sha256), release: async () => undefined };
    },
    async record(runId, jobKey, report, repairedCsvGz) {
      const csv = repairedCsvGz ? await blobs.writeStream(Readable.from([repairedCsvGz]), { maxBytes: Number.MAX_SAFE_INTEGER }) : null;
      const outcome = store.reports.recordAnalysis(runId, report, jobKey, { repairedCsvSha256: csv?.sha256 ?? null });
      if (!outcome.recorded) {
        if (csv) await blobs.remove(csv.sha256, guard);
        return { recorded: false, reason: outcome.reason };
      }
      const now = deps.clock.now();
      store.webhooks.enqueueEvent(
        'run.analysed',
        { event: 'run.analysed', at: now.toISOString(), run: store.runs.get(runId), report: { score: report.score, verdict: report.verdict, flags: report.flags.length } },
        now,
      );
      deps.afterRecorded?.(runId, now);
      return { recorded: true };
    },
    async reject(runId, jobKey, r) {
      if (!store.runs.markRejected(runId, jobKey, r.reason)) return;
      store.audit.append('worker', 'run.rejected', runId, { code: r.code, file: r.file, line: r.line, column: r.column, reason: r.reason });
      const now = deps.clock.now();
      store.webhooks.enqueueEvent('run.analysed', { event: 'run.analysed', at: now.toISOString(), run: store.runs.get(runId), report: null }, now);
    },
    async fail(runId, jobKey, reason) {
      store.runs.markFailed(runId, jobKey, reason);
    },
  };
}
