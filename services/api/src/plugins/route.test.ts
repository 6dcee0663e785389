import Fastify from 'fastify';
import { afterEach, describe, expect, it } from 'vitest';
import { z } from 'zod';
import type { Principal } from './auth.ts';
import { registerProblemHandler } from './problem.ts';
import { defineRoute } from './route.ts';
import type { RouteContext } from './route-types.ts';

/**
 * Response checking in `defineRoute`: a frozen object returned again by a handler (a shared list page) is checked
 * and serialised once, while new objects are checked on every request; a response that breaks its schema is a 500
 * either way.
 */
const Item = z.object({ name: z.string(), count: z.number().int() }).strict();
const Page = z.object({ items: z.array(Item) }).strict();

let apps: ReturnType<typeof Fastify>[] = [];
afterEach(async () => {
  for (const a of apps) await a.close();
  apps = [];
});

function appWith(handler: () => unknown) {
  const app = Fastify({ logger: false });
  apps.push(app);
  registerProblemHandler(app);
  const ctx: RouteContext = {
    app,
    openapi: { add: () => undefined },
    authenticate: () => ({ tokenId: 't', role: 'lead', name: 'lead', robotId: null }) satisfies Principal,
  };
  defineRoute(ctx, { method: 'GET', url: '/page', operationId: 'page', summary: 'page', tag: 'test', auth: 'public', responses: { 200: Page } }, async () => handler());
  return app;
}

describe('response checks of shared frozen objects', () => {
  it('serves a shared frozen page with the same bytes each time', async () => {
    const shared = Object.freeze({ items: Object.freeze([{ name: 'heron-01', count: 3 }]) });
    const app = appWith(() => shared);
    const a = await app.inject({ method: 'GET', url: '/page' });
    const b = await app.inject({ method: 'GET', url: '/page' });
    expect(a.statusCode).toBe(200);
    expect(a.headers['content-type']).toBe('application/json; charset=utf-8');
    expect(a.json()).toEqual({ items: [{ name: 'heron-01', count: 3 }] });
    expect(b.body).toBe(a.body);
  });

  it('still refuses a frozen page that breaks the schema, every time', async () => {
    const bad = Object.freeze({ items: [{ name: 'wren-01', count: 1.5 }] });
    const app = appWith(() => bad);
    expect((await app.inject({ method: 'GET', url: '/page' })).statusCode).toBe(500);
    expect((await app.inject({ method: 'GET', url: '/page' })).statusCode).toBe(500);
  });

  it('checks a new (unfrozen) object on every request', async () => {
    let n = 0;
    const app = appWith(() => ({ items: [{ name: 'tern-01', count: n++ === 0 ? 1 : 0.5 }] }));
    expect((await app.inject({ method: 'GET', url: '/page' })).statusCode).toBe(200);
    expect((await app.inject({ method: 'GET', url: '/page' })).statusCode).toBe(500);
  });
});

describe('one change check per request', () => {
  it('runs the token check and a synchronous handler inside the context step, and an async continuation after it', async () => {
    const app = Fastify({ logger: false });
    apps.push(app);
    registerProblemHandler(app);
    let depth = 0;
    const seen: string[] = [];
    const ctx: RouteContext = {
      app,
      openapi: { add: () => undefined },
      authenticate: () => {
        seen.push(`auth:${depth}`);
        return { tokenId: 't', role: 'lead', name: 'lead', robotId: null };
      },
      withOneChangeCheck: (fn) => {
        depth++;
        try {
          return fn();
        } finally {
          depth--;
        }
      },
    };
    const spec = { method: 'GET', operationId: 'page', summary: 'page', tag: 'test', auth: ['lead'], responses: { 200: Page } } as const;
    defineRoute(ctx, { ...spec, url: '/sync' }, () => {
      seen.push(`sync:${depth}`);
      return { items: [] };
    });
    defineRoute(ctx, { ...spec, url: '/async', operationId: 'page2' }, async () => {
      await new Promise((r) => setImmediate(r));
      seen.push(`async:${depth}`);
      return { items: [] };
    });
    expect((await app.inject({ method: 'GET', url: '/sync' })).statusCode).toBe(200);
    expect((await app.inject({ method: 'GET', url: '/async' })).statusCode).toBe(200);
    expect(seen).toEqual(['auth:1', 'sync:1', 'auth:1', 'async:0']);
  });
});
