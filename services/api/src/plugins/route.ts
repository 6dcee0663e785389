import type { FastifyReply, FastifyRequest } from 'fastify';
import type { Role } from '@plumbline/contracts';
import type { z } from 'zod';
import { errors } from '../errors.ts';
import type { Principal } from './auth.ts';
import type { RawContent, RouteContext, RouteHandler, RouteInput, RouteSpec } from './route-types.ts';

export type { RawContent, RouteContext, RouteHandler, RouteInput, RouteSpec } from './route-types.ts';

function isRaw(x: z.ZodType | RawContent): x is RawContent {
  return (x as RawContent).contentTypes !== undefined;
}

function parsePart<S extends z.ZodType>(schema: S | undefined, value: unknown, where: string): z.output<S> {
  if (!schema) return undefined as z.output<S>;
  const r = schema.safeParse(value);
  if (!r.success) {
    const issues = r.error.issues.map((i) => ({ path: i.path.join('.'), message: i.message }));
    const first = issues[0];
    const text = first ? `${first.path || '(root)'}: ${first.message}` : 'does not match the schema';
    throw errors.VALIDATION_FAILED(where, text).with({ issues });
  }
  return r.data;
}

/** True for a plain object whose values are all primitives (safe to share once frozen). */
function isFlat(x: unknown): x is Record<string, unknown> {
  if (typeof x !== 'object' || x === null || Array.isArray(x)) return false;
  for (const k in x) {
    const v = (x as Record<string, unknown>)[k];
    if (typeof v === 'object' && v !== null) return false;
  }
  return true;
}

/**
 * The checked query of a GET route, remembered by the raw query string (bounded per route): parsing a query string
 * and checking it against a schema is a pure function of that string, and clients repeat the same few (a list
 * filter, page after page). Only flat answers are kept, frozen, so a handler cannot change what the next request
 * gets; a query that fails its check is never kept and fails again the same way.
 */
function queryChecker<Q extends z.ZodType>(schema: Q): (req: FastifyRequest) => z.output<Q> {
  const checked = new Map<string, z.output<Q>>();
  return (req) => {
    const at = req.url.indexOf('?');
    const raw = at < 0 ? '' : req.url.slice(at + 1);
    const known = checked.get(raw);
    if (known !== undefined) return known;
    const value = parsePart(schema, req.query, 'query');
    if (isFlat(value)) {
      if (checked.size >= 256) checked.clear();
      Object.freeze(value);
      checked.set(raw, value);
    }
    return value;
  };
}

function isThenable(x: unknown): x is PromiseLike<unknown> {
  return typeof x === 'object' && x !== null && typeof (x as { then?: unknown }).then === 'function';
}

/**
 * What a route handler gives back to the framework once it has sent: nothing when the response is complete, or the
 * reply itself (a thenable resolved when the response ends) while it is still being written, as with a stream.
 */
function sent(reply: FastifyReply): FastifyReply | undefined {
  return reply.sent ? undefined : reply;
}

/** Frozen responses already checked against a schema, by the identity of the object the handler returned. */
const checkedBodies = new WeakMap<object, { schema: z.ZodType; json: Buffer }>();

/**
 * Registers a route whose params, query, body and response are checked with zod, and records it in the
 * OpenAPI document. Validation failures become 400 problems naming the field; a response that does not match
 * its schema is a server bug and becomes a 500 (logged with the issues).
 */
export function defineRoute<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType>(
  ctx: RouteContext,
  spec: RouteSpec<P, Q, B>,
  handler: RouteHandler<P, Q, B>,
): void {
  ctx.openapi.add(spec);
  const checkQuery = spec.query && spec.method === 'GET' ? queryChecker(spec.query) : null;
  const authFirst: readonly Role[] | null = spec.bodyLimit && spec.auth !== 'public' ? spec.auth : null;
  /** Checks and sends what the handler returned; `reply` (a thenable) while a response is still being written. */
  const finish = (req: FastifyRequest, reply: FastifyReply, result: unknown): FastifyReply | undefined => {
    if (reply.sent || result === reply) return reply;
    const schema = spec.responses[reply.statusCode];
    if (!schema || isRaw(schema)) return sent(reply.send(result));
    // A handler may return the same frozen object again (the store shares list pages until the database changes):
    // it was checked and serialised the first time, so only new objects are parsed and stringified.
    const isObject = typeof result === 'object' && result !== null && Object.isFrozen(result);
    const known = isObject ? checkedBodies.get(result) : undefined;
    if (known !== undefined && known.schema === schema) return sent(reply.type('application/json; charset=utf-8').send(known.json));
    const checked = schema.safeParse(result);
    if (!checked.success) {
      req.log.error({ operationId: spec.operationId, issues: checked.error.issues.slice(0, 5) }, 'response does not match its schema');
      throw errors.INTERNAL(String(req.id));
    }
    if (!isObject) return sent(reply.send(checked.data));
    // kept as bytes: a string would be encoded again on every send
    const json = Buffer.from(JSON.stringify(checked.data), 'utf8');
    checkedBodies.set(result, { schema, json });
    return sent(reply.type('application/json; charset=utf-8').send(json));
  };
  const respond = (req: FastifyRequest, reply: FastifyReply, principal: Principal): PromiseLike<FastifyReply | undefined> | FastifyReply | undefined => {
    const input: RouteInput<P, Q, B> = {
      params: parsePart(spec.params, req.params, 'path parameters'),
      query: checkQuery ? checkQuery(req) : parsePart(spec.query, req.query, 'query'),
      body: parsePart(spec.body, req.body, 'body'),
      principal,
    };
    const result = handler(req, input, reply);
    return isThenable(result) ? result.then((r) => finish(req, reply, r)) : finish(req, reply, result);
  };
  const answer = (req: FastifyRequest, reply: FastifyReply): PromiseLike<FastifyReply | undefined> | FastifyReply | undefined => {
    const principal = spec.auth === 'public' ? (null as unknown as Principal) : ctx.authenticate(req, spec.auth);
    const pending = spec.preHandler?.(req);
    if (isThenable(pending)) return pending.then(() => respond(req, reply, principal));
    return respond(req, reply, principal);
  };
  const oneCheck = ctx.withOneChangeCheck;
  ctx.app.route({
    method: spec.method,
    url: spec.url,
    config: { operationId: spec.operationId },
    ...(spec.bodyLimit ? { bodyLimit: spec.bodyLimit } : {}),
    // A route that takes a large body checks the token before the body is read, so nobody without one can make the
    // server buffer and parse it. (Other routes get no hook at all: it would cost a call per request.)
    onRequest: authFirst
      ? [
          (req, _reply, done) => {
            ctx.authenticate(req, authFirst);
            done();
          },
        ]
      : [],
    // Synchronous unless the pre-handler or the route handler returns a promise: a list answered from the cache is
    // checked, serialised and sent in the same turn, without a promise per step. That synchronous part looks for
    // outside commits once for all the store's caches it reads (the token, then the page).
    handler: (req, reply) => (oneCheck ? oneCheck(() => answer(req, reply)) : answer(req, reply)),
  });
}
