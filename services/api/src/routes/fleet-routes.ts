import { z } from 'zod';
import { FeedbackReport, MaintenanceFinding, RobotCalibration } from '@plumbline/contracts';
import { feedbackReport } from '@plumbline/analysis';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { assertMayReadRobot } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { ALL_ROLES, READERS } from './common.ts';
import { createPolicyLookup, policyOrThrow, refreshMaintenance, robotCalibration } from './fleet-common.ts';

const RobotParams = z.object({ robot_id: z.string().min(1).max(128) }).strict();
const MaintenanceQuery = z
  .object({ status: z.enum(['open', 'resolved', 'all']).default('open'), robot_id: z.string().max(128).optional(), limit: z.coerce.number().int().min(1).max(500).default(200) })
  .strict();
const FeedbackQuery = z
  .object({
    site: z.string().max(128).optional(),
    /** Policy whose thresholds the suggestions start from (default: the configured policy). */
    policy: z.string().max(128).optional(),
    target_dismissed_rate: z.coerce.number().min(0).max(1).default(0.2),
    min_reviewed: z.coerce.number().int().min(1).max(10_000).default(5),
  })
  .strict();
const Refreshed = z.object({ robot_id: z.string(), open: z.array(MaintenanceFinding), opened: z.number().int(), resolved: z.number().int() }).strict();

/** Fleet view: calibration drift per robot, maintenance findings, review feedback with threshold suggestions. */
export function registerFleetRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  const lookup = createPolicyLookup(ctx);
  const knownRobot = (robotId: string) => {
    if (!store.robots.get(robotId, 0)) throw errors.ROBOT_NOT_FOUND(robotId);
  };
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/robots/:robot_id/calibration', operationId: 'getRobotCalibration', summary: "Calibration series over a robot's runs and its maintenance findings", tag: 'fleet', auth: ALL_ROLES, params: RobotParams, responses: { 200: RobotCalibration } },
    async (_req, { params, principal }) => {
      assertMayReadRobot(principal, params.robot_id, () => errors.ROBOT_NOT_FOUND(params.robot_id));
      knownRobot(params.robot_id);
      return robotCalibration(store, params.robot_id);
    },
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/robots/:robot_id/calibration/refresh', operationId: 'refreshRobotCalibration', summary: "Recompute a robot's maintenance findings now", tag: 'fleet', auth: ['lead', 'admin'], params: RobotParams, responses: { 200: Refreshed } },
    async (_req, { params }) => {
      knownRobot(params.robot_id);
      const saved = refreshMaintenance(store, params.robot_id, ctx.deps.clock.now());
      return { robot_id: params.robot_id, open: [...saved.opened, ...saved.updated], opened: saved.opened.length, resolved: saved.resolved.length };
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/maintenance', operationId: 'listMaintenance', summary: 'Robot maintenance findings (open by default), newest first', tag: 'fleet', auth: READERS, query: MaintenanceQuery, responses: { 200: z.array(MaintenanceFinding) } },
    async (_req, { query }) => store.maintenance.list({ status: query.status, limit: query.limit, ...(query.robot_id ? { robotId: query.robot_id } : {}) }),
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/feedback', operationId: 'getFeedback', summary: 'How leads disposed of each flag kind, and suggested thresholds', tag: 'fleet', auth: READERS, query: FeedbackQuery, responses: { 200: FeedbackReport } },
    async (_req, { query }) => {
      const { policy } = policyOrThrow(lookup, query.policy ?? 'default');
      const flags = store.feedback.reviewedFlags(query.site ? { site: query.site } : {});
      return feedbackReport(flags, policy.thresholds, { targetDismissedRate: query.target_dismissed_rate, minReviewed: query.min_reviewed });
    },
  );
}
