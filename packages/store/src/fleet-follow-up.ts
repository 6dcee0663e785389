/**
 * The fleet follow-up after an analysis is recorded, shared by the worker (local ledger) and the API (results posted
 * by remote workers). The rules live in @plumbline/analysis, which the store must not import, so the caller injects
 * them; this file owns only what is read, what is stored and which events are queued.
 */
import type { CalibrationMetric, MaintenanceFinding, MergeGateAnswer, RunDecision, RunStatus, FlagReview, Report } from '@plumbline/contracts';
import type { StoredRunEstimates } from './fleet-types.ts';
import type { Store } from './types.ts';

/** Runs of a robot the drift detector looks at (same window as the API's on-demand refresh). */
export const DRIFT_WINDOW_RUNS = 60;

/** The analysis rules the follow-up applies (pass `maintenanceFindings` and `mergeGate` of @plumbline/analysis). */
export interface FleetRules {
  maintenanceFindings(robotId: string, runs: readonly StoredRunEstimates[], nowIso: string, options: { open: ReadonlySet<CalibrationMetric> }): MaintenanceFinding[];
  mergeGate(input: {
    run: string;
    status: RunStatus;
    report: Report | null;
    review: { decision: RunDecision; flags: readonly FlagReview[] } | null;
    thresholds: null;
  }): MergeGateAnswer;
}

/**
 * After a report of `runId` is recorded: recompute the robot's maintenance findings (queueing `robot.maintenance` for
 * findings opened or resolved, in the same transaction as the findings) and, when the merge gate now answers ready,
 * queue `run.merge-ready`. Throws what the store throws; callers log it and keep the recorded analysis.
 */
export function recordFleetFollowUp(store: Store, rules: FleetRules, runId: string, now: Date): void {
  const run = store.runs.get(runId);
  if (!run) return;
  const nowIso = now.toISOString();
  const open = new Set(store.maintenance.list({ robotId: run.robot_id }).map((f) => f.metric));
  const findings = rules.maintenanceFindings(run.robot_id, store.maintenance.robotEstimates(run.robot_id, DRIFT_WINDOW_RUNS), nowIso, { open });
  store.maintenance.saveFindings(run.robot_id, findings, nowIso, (saved) => {
    if (saved.opened.length === 0 && saved.resolved.length === 0) return;
    store.webhooks.enqueueEvent('robot.maintenance', { event: 'robot.maintenance', at: nowIso, robot_id: run.robot_id, opened: saved.opened, resolved: saved.resolved }, now);
  });
  const latest = store.reviews.list(runId).at(-1) ?? null;
  const gate = rules.mergeGate({
    run: runId,
    status: run.status,
    report: store.reports.current(runId),
    review: latest ? { decision: latest.decision, flags: latest.flags } : null,
    thresholds: null,
  });
  if (gate.ready) store.webhooks.enqueueEvent('run.merge-ready', { event: 'run.merge-ready', at: nowIso, run, gate }, now);
}
