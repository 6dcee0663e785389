import { resolvePolicy, type MaintenanceFinding, type Policy, type RobotCalibration } from '@plumbline/contracts';
import { loadPolicy } from '@plumbline/config';
import { calibrationSeries, maintenanceFindings } from '@plumbline/analysis';
import type { FindingsSaved, Store } from '@plumbline/store';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';

/** Runs of a robot the drift detector looks at (the latest; older runs say little about today's calibration). */
export const DRIFT_WINDOW_RUNS = 60;

/**
 * A policy by the name used in jobs and requests: `name@version` (a stored version), `name` (the latest stored
 * version, else the configured policy when the name is its own or `default`). Null when unknown.
 */
export function createPolicyLookup(ctx: ApiContext): (spec: string) => { label: string; policy: Policy } | null {
  let configured: Policy | null = null;
  return (spec) => {
    const at = spec.lastIndexOf('@');
    if (at > 0) {
      const stored = ctx.deps.store.policies.get(spec.slice(0, at), spec.slice(at + 1));
      return stored ? { label: spec, policy: stored.policy } : null;
    }
    const latest = ctx.deps.store.policies.get(spec);
    if (latest) return { label: `${latest.name}@${latest.version}`, policy: latest.policy };
    configured ??= loadPolicy(ctx.config.policyFile);
    return spec === 'default' || spec === configured.name ? { label: spec, policy: configured } : null;
  };
}

/** The thresholds of `policy` for one run (site and robot-model overrides applied, as the analysis does). */
export function thresholdsForRun(store: Store, policy: Policy, runId: string, site: string) {
  const manifest = store.runs.manifest(runId) as { robot_model?: string } | null;
  return resolvePolicy(policy, site, manifest?.robot_model ?? null).thresholds;
}

/** Series and findings of a robot (findings as stored: open and resolved). */
export function robotCalibration(store: Store, robotId: string): RobotCalibration {
  const runs = store.maintenance.robotEstimates(robotId, DRIFT_WINDOW_RUNS);
  return { robot_id: robotId, series: calibrationSeries(runs), findings: store.maintenance.list({ robotId, status: 'all', limit: 100 }) };
}

/**
 * Recomputes a robot's maintenance findings from its stored runs, stores them, and in the same transaction queues a
 * `robot.maintenance` webhook event for every finding that was opened or resolved.
 */
export function refreshMaintenance(store: Store, robotId: string, now: Date): FindingsSaved {
  const runs = store.maintenance.robotEstimates(robotId, DRIFT_WINDOW_RUNS);
  const nowIso = now.toISOString();
  const open = new Set(store.maintenance.list({ robotId }).map((f) => f.metric));
  const findings: MaintenanceFinding[] = maintenanceFindings(robotId, runs, nowIso, { open });
  return store.maintenance.saveFindings(robotId, findings, nowIso, (saved) => {
    if (saved.opened.length === 0 && saved.resolved.length === 0) return;
    store.webhooks.enqueueEvent('robot.maintenance', { event: 'robot.maintenance', at: nowIso, robot_id: robotId, opened: saved.opened, resolved: saved.resolved }, now);
  });
}

export function policyOrThrow(lookup: ReturnType<typeof createPolicyLookup>, spec: string): { label: string; policy: Policy } {
  const found = lookup(spec);
  if (!found) throw errors.POLICY_NOT_FOUND(spec);
  return found;
}
