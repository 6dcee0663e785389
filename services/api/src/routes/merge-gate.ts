import { MergeGateRequest, MergeGateResponse, type MergeGateAnswer } from '@plumbline/contracts';
import { mergeGate } from '@plumbline/analysis';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { defineRoute } from '../plugins/route.ts';
import { createPolicyLookup, policyOrThrow, thresholdsForRun } from './fleet-common.ts';

/**
 * Merge gate for integrators: for each run, merge-ready or not under a policy, with reasons, segments to cut and
 * time ranges to keep. The rules are those of `mergeGate` (packages/analysis/src/fleet/merge-gate.ts, docs/fleet.md).
 */
export function registerMergeGateRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  const lookup = createPolicyLookup(ctx);
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/merge-gate', operationId: 'mergeGate', summary: 'Whether runs are ready to merge into the map, and which time ranges to keep', tag: 'merge-gate', auth: ['integrator', 'lead', 'admin'], body: MergeGateRequest, responses: { 200: MergeGateResponse } },
    async (_req, { body }) => {
      const named = body.policy === undefined ? null : policyOrThrow(lookup, body.policy);
      const answers: MergeGateAnswer[] = body.runs.map((id) => {
        const run = store.runs.get(id);
        if (!run) throw errors.RUN_NOT_FOUND(id);
        const reviews = store.reviews.list(id);
        const latest = reviews.at(-1) ?? null;
        return mergeGate({
          run: id,
          status: run.status,
          report: run.status === 'done' ? store.reports.current(id) : null,
          review: latest ? { decision: latest.decision, flags: latest.flags } : null,
          thresholds: named ? thresholdsForRun(store, named.policy, id, run.site) : null,
        });
      });
      return { policy: named?.label ?? null, all_ready: answers.every((a) => a.ready), runs: answers };
    },
  );
}
