/**
 * Server child processes for the HTTP benchmarks, one kind per process so each side has the machine to itself:
 * - `api <dataDir>`: the real API (buildApp over the store, blob store and embedded queue in <dataDir>), as served.
 * - `sink`: a bare Node HTTP server that reads and discards request bodies (ingest baseline).
 * - `constant <file>`: a bare Fastify route answering every GET with the bytes of <file> as JSON (list baseline).
 * Prints `BENCH_READY {"port":…, "tokens":{…}}` once listening; exits on SIGTERM.
 */
import { readFileSync } from 'node:fs';
import { createServer } from 'node:http';
import Fastify from 'fastify';
import pino from 'pino';
import { loadConfig } from '@plumbline/config';
import { openResources, buildApp } from '@plumbline/api';

function ready(port: number, extra: Record<string, unknown> = {}): void {
  console.log(`BENCH_READY ${JSON.stringify({ port, ...extra })}`);
}

async function api(dataDir: string): Promise<() => Promise<void>> {
  const config = loadConfig({
    PLUMBLINE_DATA_DIR: dataDir, PLUMBLINE_LOG_LEVEL: 'silent', PLUMBLINE_HOST: '127.0.0.1', PLUMBLINE_PORT: '0',
    PLUMBLINE_UPLOAD_RATE_PER_MIN: '100000',
  });
  const res = openResources(config, pino({ level: 'silent' }));
  const robot = res.deps.store.tokens.create({ role: 'robot', name: 'kestrel-02', robot_id: 'kestrel-02' }).token;
  const lead = res.deps.store.tokens.create({ role: 'lead', name: 'bench-lead' }).token;
  const app = await buildApp(config, res.deps);
  await app.listen({ host: '127.0.0.1', port: 0 });
  const addr = app.server.address();
  ready(typeof addr === 'object' && addr ? addr.port : 0, { tokens: { robot, lead } });
  return async () => {
    await app.close();
    await res.close();
  };
}

async function sink(): Promise<() => Promise<void>> {
  const server = createServer((req, res) => {
    let bytes = 0;
    req.on('data', (c: Buffer) => (bytes += c.length));
    req.on('end', () => {
      res.writeHead(201, { 'content-type': 'application/json' });
      res.end(JSON.stringify({ bytes }));
    });
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const addr = server.address();
  ready(typeof addr === 'object' && addr ? addr.port : 0);
  return () => new Promise<void>((r) => server.close(() => r()));
}

async function constant(file: string): Promise<() => Promise<void>> {
  const body = readFileSync(file);
  const app = Fastify({ logger: false });
  app.get('/*', async (_req, reply) => reply.type('application/json; charset=utf-8').send(body));
  await app.listen({ host: '127.0.0.1', port: 0 });
  const addr = app.server.address();
  ready(typeof addr === 'object' && addr ? addr.port : 0);
  return () => app.close();
}

const [kind, arg] = process.argv.slice(2);
const stop = kind === 'api' && arg ? await api(arg) : kind === 'sink' ? await sink() : kind === 'constant' && arg ? await constant(arg) : null;
if (!stop) {
  console.error('usage: server-child.ts <api <dataDir> | sink | constant <file>>');
  process.exit(2);
}
process.once('SIGTERM', () => void stop().then(() => process.exit(0)));
