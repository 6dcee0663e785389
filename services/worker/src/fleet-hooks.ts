import type { Logger } from 'pino';
import type { Policy } from '@plumbline/contracts';
import { maintenanceFindings, mergeGate } from '@plumbline/analysis';
import { recordFleetFollowUp, type Store } from '@plumbline/store';

/**
 * After a report is recorded: the fleet follow-up of @plumbline/store (maintenance findings, `robot.maintenance`,
 * `run.merge-ready`) with the analysis rules. A failure here is logged, never undoes the recorded analysis.
 */
export function createAfterRecorded(store: Store, logger: Logger): (runId: string, now: Date) => void {
  const rules = { maintenanceFindings, mergeGate };
  return (runId, now) => {
    try {
      recordFleetFollowUp(store, rules, runId, now);
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
