import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { extname, resolve, sep } from 'node:path';
import type { FastifyInstance, FastifyReply } from 'fastify';

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.map': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.woff2': 'font/woff2',
  '.txt': 'text/plain; charset=utf-8',
};

/**
 * Resolves a URL path under `root`, or null when it would leave it. Decodes percent-escapes first so `%2e%2e`
 * is caught, and refuses NUL bytes and backslashes.
 */
export function safeJoin(root: string, urlPath: string): string | null {
  let decoded: string;
  try {
    decoded = decodeURIComponent(urlPath);
  } catch {
    return null;
  }
  if (decoded.includes('\0') || decoded.includes('\\')) return null;
  const full = resolve(root, `.${decoded.startsWith('/') ? '' : '/'}${decoded}`);
  return full === root || full.startsWith(root + sep) ? full : null;
}

async function sendFile(reply: FastifyReply, path: string, immutable: boolean): Promise<FastifyReply | null> {
  const st = await stat(path).catch(() => null);
  if (!st?.isFile()) return null;
  reply.header('content-type', TYPES[extname(path).toLowerCase()] ?? 'application/octet-stream');
  reply.header('content-length', st.size);
  reply.header('cache-control', immutable ? 'public, max-age=31536000, immutable' : 'no-cache');
  return reply.send(createReadStream(path));
}

/**
 * Serves the dashboard build (index.html at `/`, files under `/assets/`) without authentication. Does nothing when
 * the directory has no index.html (API-only deployments).
 */
export async function registerStatic(app: FastifyInstance, distDir: string): Promise<boolean> {
  const root = resolve(distDir);
  const index = resolve(root, 'index.html');
  if (!(await stat(index).catch(() => null))?.isFile()) return false;
  app.get('/', async (_req, reply) => (await sendFile(reply, index, false)) ?? reply.callNotFound());
  app.get('/assets/*', async (req, reply) => {
    const rest = (req.params as { '*': string })['*'];
    const path = safeJoin(resolve(root, 'assets'), rest);
    if (!path) return reply.callNotFound();
    return (await sendFile(reply, path, /[.-][0-9a-zA-Z_]{8,}\.\w+$/.test(path))) ?? reply.callNotFound();
  });
  return true;
}
