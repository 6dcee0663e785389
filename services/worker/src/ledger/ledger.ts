import type { Policy, Report } from '@plumbline/contracts';

/** Where a job's bundle is read from; `release()` removes a temporary download (no-op for a stored blob). */
export interface BundleHandle {
  path: string;
  release(): Promise<void>;
}

export type StartOutcome =
  | { started: true; sha256: string; policy: Policy }
  | { started: false; reason: 'stale' }
  | { started: false; reason: 'not-found' }
  | { started: false; reason: 'unknown-policy'; message: string };

/** A bundle problem found by the analysis: the run is rejected with this reason and location. */
export interface Rejection {
  reason: string;
  code: string | null;
  file: string | null;
  line: number | null;
  column: number | null;
}

export type RecordResult = { recorded: true } | { recorded: false; reason: string };

/**
 * Everything an analysis job reads from and writes to the system of record. Two implementations: `local` (the store
 * and the blob directory of this host, shared with the API) and `remote` (the API over HTTP, for workers on other
 * hosts). The job-key rules are the store's in both: a stale or duplicate result is refused, never recorded twice.
 */
export interface AnalysisLedger {
  /** `queued` -> `analysing` under the job key, and the policy to analyse with (resolved by name). */
  start(runId: string, jobKey: string, policyName: string | null): Promise<StartOutcome>;
  bundle(runId: string, sha256: string): Promise<BundleHandle>;
  /** Records the report (and the gzipped repaired trajectory) and queues the webhooks; exactly once per job key. */
  record(runId: string, jobKey: string, report: Report, repairedCsvGz: Uint8Array | null): Promise<RecordResult>;
  reject(runId: string, jobKey: string, rejection: Rejection): Promise<void>;
  fail(runId: string, jobKey: string, reason: string): Promise<void>;
}
