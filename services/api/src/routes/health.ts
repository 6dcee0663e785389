import { z } from 'zod';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { CallbackGauge } from '../metrics.ts';
import { defineRoute } from '../plugins/route.ts';

const Health = z.object({ status: z.literal('ok') }).strict();
const Ready = z.object({ status: z.literal('ready'), database: z.boolean(), queue: z.boolean() }).strict();

export function registerHealthRoutes(ctx: ApiContext): void {
  const { store, queue } = ctx.deps;
  const reg = ctx.metrics.registry;
  reg.register(
    new CallbackGauge('plumbline_runs', 'Runs by status and verdict', () => {
      const s = store.stats();
      return [
        ...Object.entries(s.runs_by_status).map(([status, n]): [Record<string, string>, number] => [{ status }, n]),
        ...Object.entries(s.runs_by_verdict).map(([verdict, n]): [Record<string, string>, number] => [{ verdict }, n]),
      ];
    }),
  );
  reg.register(
    new CallbackGauge('plumbline_webhook_deliveries_pending', 'Webhook deliveries waiting to be sent', () => [[{}, store.stats().webhook_deliveries_pending]]),
  );
  reg.register(new CallbackGauge('plumbline_uploads_open', 'Open resumable upload sessions', () => [[{}, store.stats().open_uploads]]));
  reg.registerAsync(async () => {
    const c = await queue.counts();
    return [
      new CallbackGauge('plumbline_queue_depth', 'Analysis jobs waiting to run (waiting + delayed)', () => [[{}, c.waiting + c.delayed]]),
      new CallbackGauge('plumbline_queue_jobs', 'Analysis jobs by queue state', () =>
        Object.entries(c).map(([state, n]): [Record<string, string>, number] => [{ state }, n]),
      ),
    ];
  });

  defineRoute(
    ctx,
    { method: 'GET', url: '/healthz', operationId: 'health', summary: 'Liveness: the process answers', tag: 'operations', auth: 'public', responses: { 200: Health } },
    async () => ({ status: 'ok' }),
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/readyz',
      operationId: 'ready',
      summary: 'Readiness: the database and the queue answer',
      tag: 'operations',
      auth: 'public',
      responses: { 200: Ready },
    },
    async () => {
      const database = safe(() => store.ping());
      const q = await queue.ping().catch(() => false);
      if (!database || !q) throw errors.NOT_READY(`database ${database ? 'up' : 'down'}, queue ${q ? 'up' : 'down'}`).with({ database, queue: q });
      return { status: 'ready', database, queue: q };
    },
  );
  defineRoute(
    ctx,
    {
      method: 'GET',
      url: '/metrics',
      operationId: 'metrics',
      summary: 'Prometheus metrics (text exposition format 0.0.4)',
      tag: 'operations',
      auth: 'public',
      responses: { 200: { contentTypes: ['text/plain; version=0.0.4'], description: 'Prometheus text format' } },
    },
    async (_req, _in, reply) => reply.type('text/plain; version=0.0.4; charset=utf-8').send(await reg.render()),
  );
}

function safe(f: () => boolean): boolean {
  try {
    return f();
  } catch {
    return false;
  }
}
