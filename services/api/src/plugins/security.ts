import type { FastifyInstance } from 'fastify';

/** Response headers every reply carries. The dashboard is same-origin and script files are self-hosted. */
const BASE_HEADERS: Readonly<Record<string, string>> = {
  'x-content-type-options': 'nosniff',
  'x-frame-options': 'DENY',
  'referrer-policy': 'no-referrer',
  'cross-origin-opener-policy': 'same-origin',
  'cross-origin-resource-policy': 'same-origin',
  'content-security-policy':
    "default-src 'self'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; script-src 'self'; connect-src 'self'; frame-ancestors 'none'; base-uri 'none'; form-action 'self'",
  'permissions-policy': 'camera=(), microphone=(), geolocation=()',
};

/**
 * Security headers, request-id echo, and CORS. CORS is closed unless origins are configured: without a match
 * no Access-Control-* header is sent, so browsers on other origins cannot read responses.
 */
export function registerSecurity(app: FastifyInstance, opts: { corsOrigins: readonly string[]; hsts: boolean }): void {
  const allowed = new Set(opts.corsOrigins);
  const fixed: Array<[string, string]> = Object.entries(BASE_HEADERS);
  if (opts.hsts) fixed.push(['strict-transport-security', 'max-age=31536000']);
  // callback form: a synchronous hook needs no promise per request
  app.addHook('onRequest', (req, reply, done) => {
    for (const [k, v] of fixed) reply.header(k, v);
    reply.header('x-request-id', String(req.id));
    const origin = req.headers.origin;
    if (typeof origin === 'string' && allowed.has(origin)) {
      reply.header('access-control-allow-origin', origin);
      reply.header('vary', 'Origin');
      reply.header('access-control-expose-headers', 'x-request-id, retry-after');
      if (req.method === 'OPTIONS') {
        reply.header('access-control-allow-methods', 'GET, POST, PUT, DELETE');
        reply.header('access-control-allow-headers', 'authorization, content-type, x-request-id');
        reply.header('access-control-max-age', '600');
        reply.code(204).send();
        return;
      }
    }
    done();
  });
}

const REQUEST_ID = /^[A-Za-z0-9._:-]{1,128}$/;

/** Honours a well-formed `x-request-id` header; otherwise a new UUID. Malformed ids are not logged verbatim. */
export function requestIdFrom(header: unknown, fresh: () => string): string {
  return typeof header === 'string' && REQUEST_ID.test(header) ? header : fresh();
}
