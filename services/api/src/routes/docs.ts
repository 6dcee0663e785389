import type { ApiContext } from '../context.ts';
import { defineRoute } from '../plugins/route.ts';
import { renderReference } from '../plugins/reference-page.ts';

export function registerDocRoutes(ctx: ApiContext): void {
  const serverUrl = ctx.config.publicUrl ?? '/';
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/openapi.json',
      operationId: 'openapi',
      summary: 'This API as an OpenAPI 3.1 document',
      tag: 'operations',
      auth: 'public',
      responses: { 200: { contentTypes: ['application/json'], description: 'OpenAPI 3.1 document' } },
    },
    async (_req, _in, reply) => reply.type('application/json').send(ctx.openapi.document(serverUrl)),
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/reference',
      operationId: 'reference',
      summary: 'Readable API reference (HTML)',
      tag: 'operations',
      auth: 'public',
      responses: { 200: { contentTypes: ['text/html'], description: 'HTML page' } },
    },
    async (_req, _in, reply) => reply.type('text/html; charset=utf-8').send(renderReference(ctx.openapi.document(serverUrl))),
  );
}
