import { z } from 'zod';
import { Role, TokenCreate, TokenInfo } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { actorOf } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { ALL_ROLES, IdParams } from './common.ts';

const Me = z.object({ role: Role, name: z.string(), robot_id: z.string().nullable() }).strict();
const TokenCreated = z.object({ token: z.string(), info: TokenInfo }).strict();

export function registerTokenRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/me', operationId: 'me', summary: 'Who the token belongs to', tag: 'tokens', auth: ALL_ROLES, responses: { 200: Me } },
    async (_req, { principal }) => ({ role: principal.role, name: principal.name, robot_id: principal.robotId }),
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/tokens', operationId: 'createToken', summary: 'Create a token (the plaintext is returned once)', tag: 'tokens', auth: ['admin'], body: TokenCreate, responses: { 201: TokenCreated } },
    async (_req, { body, principal }, reply) => {
      if (body.role === 'robot' && !body.robot_id) throw errors.VALIDATION_FAILED('body', 'robot_id: a robot token needs the robot it acts for');
      if (body.role !== 'robot' && body.robot_id) throw errors.VALIDATION_FAILED('body', 'robot_id: only robot tokens are bound to a robot');
      const created = store.tokens.create(body);
      store.audit.append(actorOf(principal), 'token.created', created.info.id, { role: body.role, name: body.name });
      reply.code(201);
      return created;
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/tokens', operationId: 'listTokens', summary: 'All tokens (without their secrets)', tag: 'tokens', auth: ['admin'], responses: { 200: z.array(TokenInfo) } },
    async () => store.tokens.list(),
  );
  defineRoute(
    ctx,
    { method: 'DELETE', url: '/api/v1/tokens/:id', operationId: 'revokeToken', summary: 'Revoke a token at once', tag: 'tokens', auth: ['admin'], params: IdParams, responses: { 204: z.null() } },
    async (_req, { params, principal }, reply) => {
      if (!store.tokens.revoke(params.id)) throw errors.TOKEN_NOT_FOUND(params.id);
      store.audit.append(actorOf(principal), 'token.revoked', params.id);
      return reply.code(204).send();
    },
  );
}
