/** Interfaces of the fleet-view repositories (migration 0002), in their own file so types.ts imports them without a cycle. */
import type { Estimates, MaintenanceFinding, Policy, ReviewedFlag, StoredPolicy, VerdictChange } from '@plumbline/contracts';

/** A run's id, start time and current report estimates, as the drift detector reads them. */
export interface StoredRunEstimates {
  run: string;
  run_id: string;
  started_at: string | null;
  estimates: Estimates;
}

export interface FindingsSaved {
  /** Findings of a metric that had no open finding before. */
  opened: MaintenanceFinding[];
  /** Findings still open, with updated numbers (detected_at and id kept). */
  updated: MaintenanceFinding[];
  resolved: MaintenanceFinding[];
}

export interface MaintenanceRepository {
  /** Current-report estimates of a robot's analysed runs, oldest first by started_at (received_at when unknown); the latest `limit`. */
  robotEstimates(robotId: string, limit?: number): StoredRunEstimates[];
  /**
   * Replaces a robot's open findings with `findings` in one transaction: a metric still drifting keeps its id and
   * detected_at, a new one is opened, a metric no longer drifting is resolved. `within` runs inside the transaction
   * with the outcome (e.g. to queue `robot.maintenance` webhook deliveries with the fact).
   */
  saveFindings(robotId: string, findings: readonly MaintenanceFinding[], nowIso: string, within?: (saved: FindingsSaved) => void): FindingsSaved;
  /** Findings, newest update first; filters by robot and status (default open). */
  list(opts?: { robotId?: string; status?: 'open' | 'resolved' | 'all'; limit?: number }): MaintenanceFinding[];
}

export interface PolicyRepository {
  /** Stores a new policy version; `hash` is the policy hash of the document. Throws PolicyExistsError. */
  create(policy: Policy, hash: string, createdBy: string, now?: Date): StoredPolicy;
  /** One version, or the latest stored version of `name` when `version` is omitted. */
  get(name: string, version?: string): StoredPolicy | null;
  /** The version stored before `version` of `name`, or null. */
  previous(name: string, version: string): StoredPolicy | null;
  /** All stored versions, by name then storage order. */
  list(): StoredPolicy[];
}

export interface FeedbackRepository {
  /**
   * Every flag disposition of the latest review of each run, joined with the flag's kind and measured value in the
   * run's current report and the run's site. Dispositions of flags no longer in the current report are left out.
   */
  reviewedFlags(opts?: { site?: string }): ReviewedFlag[];
  /**
   * Runs whose current report has a different verdict than the report before it, newest first; with `policies`,
   * only runs whose latest analysis was requested under one of those policy names (the run's `policy` column, e.g.
   * `yard@2`).
   */
  verdictChanges(opts?: { policies?: readonly string[]; limit?: number }): VerdictChange[];
}
