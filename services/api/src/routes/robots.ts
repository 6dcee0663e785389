import { z } from 'zod';
import { RobotSummary, RunListPage, RunListQuery } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { assertMayReadRobot } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { ALL_ROLES, READERS } from './common.ts';

const RobotParams = z.object({ robot_id: z.string().min(1).max(128) }).strict();

export function registerRobotRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/robots', operationId: 'listRobots', summary: 'Robots with their latest run and recent scores', tag: 'robots', auth: READERS, responses: { 200: z.array(RobotSummary) } },
    async () => store.robots.list(10),
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/api/v1/robots/:robot_id/runs',
      operationId: 'listRobotRuns',
      summary: 'Runs of one robot',
      tag: 'robots',
      auth: ALL_ROLES,
      params: RobotParams,
      query: RunListQuery.omit({ robot_id: true }),
      responses: { 200: RunListPage },
    },
    async (_req, { params, query, principal }) => {
      assertMayReadRobot(principal, params.robot_id, () => errors.ROBOT_NOT_FOUND(params.robot_id));
      if (!store.robots.get(params.robot_id, 0)) throw errors.ROBOT_NOT_FOUND(params.robot_id);
      return store.runs.list({ ...query, robot_id: params.robot_id });
    },
  );
}
