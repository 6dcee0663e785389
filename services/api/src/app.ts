import { randomUUID } from 'node:crypto';
import Fastify, { type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import multipart from '@fastify/multipart';
import * as contracts from '@plumbline/contracts';
import type { Config } from '@plumbline/config';
import type { ApiContext, AppDeps } from './context.ts';
import { createAuthenticator } from './plugins/auth.ts';
import { OpenApiRegistry, sharedSchemas } from './plugins/openapi.ts';
import { registerProblemHandler } from './plugins/problem.ts';
import { TokenBucketLimiter } from './plugins/rate-limit.ts';
import { registerSecurity, requestIdFrom } from './plugins/security.ts';
import { registerStatic } from './plugins/static.ts';
import { createServiceMetrics, type ServiceMetrics } from './metrics.ts';
import { registerHealthRoutes } from './routes/health.ts';
import { registerRunRoutes } from './routes/runs.ts';
import { registerUploadRoutes } from './routes/uploads.ts';
import { registerReviewRoutes } from './routes/reviews.ts';
import { registerRobotRoutes } from './routes/robots.ts';
import { registerTokenRoutes } from './routes/tokens.ts';
import { registerWebhookRoutes } from './routes/webhooks.ts';
import { registerDocRoutes } from './routes/docs.ts';
import { registerFleetRoutes } from './routes/fleet-routes.ts';
import { registerPolicyRoutes } from './routes/fleet-policies.ts';
import { registerMergeGateRoutes } from './routes/merge-gate.ts';
import { registerAnalysisResultRoutes } from './routes/analysis-results.ts';

export type { ApiContext, AppDeps, Clock, InspectBundle, TrajectoryCsv } from './context.ts';

const BUNDLE_TYPES = ['application/gzip', 'application/x-gzip', 'application/x-tar', 'application/zip', 'application/octet-stream'];

/**
 * Builds the HTTP API. No socket is opened (see server.ts); tests call `app.inject()`.
 * Bundle bodies are not parsed: the content type parser hands the request stream to the route, which streams it
 * into the blob store.
 */
export async function buildApp(config: Config, deps: AppDeps): Promise<FastifyInstance & { metrics: ServiceMetrics }> {
  const app: FastifyInstance = Fastify({
    loggerInstance: deps.logger as FastifyBaseLogger,
    genReqId: (req) => requestIdFrom(req.headers['x-request-id'], randomUUID),
    // Each request logs through a child bound to its id. While the logger is silent nothing is written either way, so
    // the child (whose bindings pino serialises when it is made) is not built; the level is read per request, so a
    // logger made louder at run time gets request children again from the next request on.
    childLoggerFactory: (logger, bindings, opts) => (logger.level === 'silent' && opts.level === undefined ? logger : logger.child(bindings, opts)),
    bodyLimit: 1024 * 1024,
    trustProxy: false,
    return503OnClosing: true,
  });
  const metrics = deps.metrics ?? createServiceMetrics();
  registerProblemHandler(app);
  registerSecurity(app, { corsOrigins: config.corsOrigins, hsts: (config.publicUrl ?? '').startsWith('https://') });
  app.addContentTypeParser(BUNDLE_TYPES, (_req, payload, done) => done(null, payload));
  await app.register(multipart, {
    limits: { fileSize: config.maxUploadBytes + 1, files: 1, fields: 4, parts: 5, fieldSize: 1024 },
    throwFileSizeLimit: false,
  });
  // callback form: a synchronous hook needs no promise per request
  app.addHook('onResponse', (req, reply, done) => {
    const route = req.routeOptions.url ?? 'unmatched';
    metrics.httpDuration.observe({ method: req.method, route, status: String(reply.statusCode) }, reply.elapsedTime / 1000);
    done();
  });

  const nowMs = () => deps.clock.now().getTime();
  const ctx: ApiContext = {
    app,
    config,
    deps,
    metrics,
    openapi: new OpenApiRegistry(sharedSchemas(contracts)),
    authenticate: createAuthenticator(deps.store.tokens, new TokenBucketLimiter(config.authFailureRatePerMin, 60_000, nowMs)),
    withOneChangeCheck: (fn) => deps.store.withOneChangeCheck(fn),
    uploadLimiter: new TokenBucketLimiter(config.uploadRatePerMin, 60_000, nowMs),
  };
  registerHealthRoutes(ctx);
  registerRunRoutes(ctx);
  registerUploadRoutes(ctx);
  registerReviewRoutes(ctx);
  registerRobotRoutes(ctx);
  registerTokenRoutes(ctx);
  registerWebhookRoutes(ctx);
  registerFleetRoutes(ctx);
  registerPolicyRoutes(ctx);
  registerMergeGateRoutes(ctx);
  registerAnalysisResultRoutes(ctx);
  registerDocRoutes(ctx);
  if (deps.dashboardDir) await registerStatic(app, deps.dashboardDir);
  return Object.assign(app, { metrics });
}
