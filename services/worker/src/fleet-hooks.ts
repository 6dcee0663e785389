import type { Logger } from 'pino';
import type { Policy } from '@plumbline/contracts';
import { maintenanceFindings, mergeGate } from '@plumbline/analysis';
import type { Store } from '@plumbline/store';

/** Runs of a robot the drift detector looks at (same window as the API's on-demand refresh). */
const DRIFT_WINDOW_RUNS = 60;

/**
 * After a report is recorded: recompute the robot's maintenance findings (queueing `robot.maintenance` for findings
 * opened or resolved, in the same transaction as the findings) and, when the merge gate now answers ready, queue
 * `run.merge-ready`. A failure here is logged, never undoes the recorded analysis.
 */
export function createAfterRecorded(store: Store, logger: Logger): (runId: string, now: Date) => void {
  return (runId, now) => {
    try {
      const run = store.runs.get(runId);
      if (!run) return;
      const nowIso = now.toISOString();
      const open = new Set(store.maintenance.list({ robotId: run.robot_id }).map((f) => f.metric));
      const findings = maintenanceFindings(run.robot_id, store.maintenance.robotEstimates(run.robot_id, DRIFT_WINDOW_RUNS), nowIso, { open });
      store.maintenance.saveFindings(run.robot_id, findings, nowIso, (saved) => {
        if (saved.opened.length === 0 && saved.resolved.length === 0) return;
        store.webhooks.enqueueEvent('robot.maintenance', { event: 'robot.maintenance', at: nowIso, robot_id: run.robot_id, opened: saved.opened, resolved: saved.resolved }, now);
      });
      const latest = store.reviews.list(runId).at(-1) ?? null;
      const gate = mergeGate({ run: runId, status: run.status, report: store.reports.current(runId), review: latest ? { decision: latest.decision, flags: latest.flags } : null, thresholds: null });
      if (gate.ready) store.webhooks.enqueueEvent('run.merge-ready', { event: 'run.merge-ready', at: nowIso, run, gate }, now);
    } catch (err) {
      logger.warn({ err, runId }, 'fleet follow-up after analysis failed');
    }
  };
}

/**
 * Policy lookup with stored versions: `name@version` is a stored policy version; a bare name is first the configured
 * resolver's (the configured policy or `default`), else the latest stored version of that name.
 */
export function withStoredPolicies(store: Store, configured: (name: string | null) => Policy | null): (name: string | null) => Policy | null {
  return (name) => {
    if (name === null) return configured(null);
    const at = name.lastIndexOf('@');
    if (at > 0) return store.policies.get(name.slice(0, at), name.slice(at + 1))?.policy ?? null;
    return configured(name) ?? store.policies.get(name)?.policy ?? null;
  };
}
