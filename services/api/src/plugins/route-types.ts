import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import type { z } from 'zod';
import type { Role } from '@plumbline/contracts';
import type { Principal } from './auth.ts';

export type Method = 'GET' | 'POST' | 'PUT' | 'DELETE';

/** A non-JSON body or response, documented by content type only (bundles, CSV, HTML). */
export interface RawContent {
  contentTypes: readonly string[];
  description: string;
}

export interface RouteSpec<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType> {
  method: Method;
  url: string;
  operationId: string;
  summary: string;
  tag: string;
  /** Roles allowed to call the route; `public` = no token needed. The one place a route states its access. */
  auth: readonly Role[] | 'public';
  params?: P;
  query?: Q;
  /** JSON request body, validated. */
  body?: B;
  /** Largest JSON body in bytes, when a route needs more than the app's default (1 MiB). */
  bodyLimit?: number;
  /** Streamed request body (the route reads it itself). */
  rawBody?: RawContent;
  /** Response schemas by status; JSON responses are validated against them before they are sent. */
  responses: Record<number, z.ZodType | RawContent>;
  /** Extra hooks run after authentication (e.g. rate limits). */
  preHandler?: (req: FastifyRequest) => void | Promise<void>;
}

export interface RouteInput<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType> {
  params: z.output<P>;
  query: z.output<Q>;
  body: z.output<B>;
  /** Null only on public routes. */
  principal: Principal;
}

/** Returns the response body (or the reply, once it has sent one itself), directly or as a promise. */
export type RouteHandler<P extends z.ZodType, Q extends z.ZodType, B extends z.ZodType> = (
  req: FastifyRequest,
  input: RouteInput<P, Q, B>,
  reply: FastifyReply,
) => unknown;

export type AnyRouteSpec = RouteSpec<z.ZodType, z.ZodType, z.ZodType>;

/** Where route specs are collected for the OpenAPI document (plugins/openapi.ts). */
export interface RouteRegistry {
  add(spec: AnyRouteSpec): void;
}

export interface RouteContext {
  app: FastifyInstance;
  openapi: RouteRegistry;
  authenticate: (req: FastifyRequest, roles: readonly Role[]) => Principal;
  /** Runs the synchronous part of a request with the store's caches checking for outside commits once (see the store). */
  withOneChangeCheck?: <T>(fn: () => T) => T;
}

