import { z } from 'zod';
import { Review, ReviewInput } from '@plumbline/contracts';
import { mergeGate } from '@plumbline/analysis';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { actorOf } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { ALL_ROLES, IdParams, visibleRun } from './common.ts';

export function registerReviewRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/runs/:id/reviews', operationId: 'addReview', summary: "Record a lead's decision on a run and on its flags", tag: 'reviews', auth: ['lead', 'admin'], params: IdParams, body: ReviewInput, responses: { 201: Review } },
    async (_req, { params, body, principal }, reply) => {
      const run = visibleRun(ctx, principal, params.id);
      const report = store.reports.current(run.id);
      const known = new Set(report?.flags.map((f) => f.id) ?? []);
      const unknown = body.flags.find((f) => !known.has(f.flag_id));
      if (unknown) throw errors.VALIDATION_FAILED('body', `flags: run ${run.id} has no flag ${unknown.flag_id} in its current report`);
      const review = store.reviews.add(run.id, body, actorOf(principal));
      const summary = store.runs.get(run.id);
      const at = ctx.deps.clock.now();
      store.webhooks.enqueueEvent('run.reviewed', { event: 'run.reviewed', at: at.toISOString(), run: summary, review }, at);
      // Merge-ready by the merge gate's rules (an accept-trimmed run with nothing left to keep is not).
      const gate = mergeGate({ run: run.id, status: summary?.status ?? run.status, report, review, thresholds: null });
      if (gate.ready) store.webhooks.enqueueEvent('run.merge-ready', { event: 'run.merge-ready', at: at.toISOString(), run: summary, review, gate }, at);
      reply.code(201);
      return review;
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/runs/:id/reviews', operationId: 'listReviews', summary: 'Reviews of a run, oldest first', tag: 'reviews', auth: ALL_ROLES, params: IdParams, responses: { 200: z.array(Review) } },
    async (_req, { params, principal }) => store.reviews.list(visibleRun(ctx, principal, params.id).id),
  );
}
