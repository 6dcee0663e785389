import { z } from 'zod';
import { WebhookCreate, WebhookDelivery, WebhookInfo } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { actorOf } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { IdParams } from './common.ts';

const HOOKERS = ['integrator', 'admin'] as const;

/**
 * Webhook subscriptions. Deliveries are signed with `Plumbline-Signature: t=<unix s>,v1=<hex HMAC-SHA256 of
 * "<t>.<raw body>">` using the subscription secret (sent by the dispatcher in the worker).
 */
export function registerWebhookRoutes(ctx: ApiContext): void {
  const { store } = ctx.deps;
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/webhooks', operationId: 'createWebhook', summary: 'Subscribe a URL to events', tag: 'webhooks', auth: HOOKERS, body: WebhookCreate, responses: { 201: WebhookInfo } },
    async (_req, { body, principal }, reply) => {
      const u = new URL(body.url);
      if (u.protocol !== 'https:' && u.protocol !== 'http:') throw errors.VALIDATION_FAILED('body', 'url: must be http(s)');
      const info = store.webhooks.create(body);
      store.audit.append(actorOf(principal), 'webhook.created', info.id, { url: body.url, events: body.events });
      reply.code(201);
      return info;
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/webhooks', operationId: 'listWebhooks', summary: 'Webhook subscriptions', tag: 'webhooks', auth: HOOKERS, responses: { 200: z.array(WebhookInfo) } },
    async () => store.webhooks.list(),
  );
  defineRoute(
    ctx,
    { method: 'DELETE', url: '/api/v1/webhooks/:id', operationId: 'deleteWebhook', summary: 'Deactivate a subscription (its deliveries stay visible)', tag: 'webhooks', auth: HOOKERS, params: IdParams, responses: { 204: z.null() } },
    async (_req, { params, principal }, reply) => {
      if (!store.webhooks.remove(params.id)) throw errors.WEBHOOK_NOT_FOUND(params.id);
      store.audit.append(actorOf(principal), 'webhook.removed', params.id);
      return reply.code(204).send();
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/webhooks/:id/deliveries', operationId: 'listDeliveries', summary: 'Deliveries of a subscription, newest first', tag: 'webhooks', auth: HOOKERS, params: IdParams, responses: { 200: z.array(WebhookDelivery) } },
    async (_req, { params }) => {
      if (!store.webhooks.get(params.id)) throw errors.WEBHOOK_NOT_FOUND(params.id);
      return store.webhooks.deliveries(params.id, 200);
    },
  );
}
