import { createHmac } from 'node:crypto';
import type { Logger } from 'pino';
import type { DueDelivery, WebhookRepository } from '@plumbline/store';

export const SIGNATURE_HEADER = 'Plumbline-Signature';

/** `t=<unix seconds>,v1=<hex HMAC-SHA256(secret, "<t>.<body>")>` */
export function signatureHeader(secret: string, unixSeconds: number, body: string): string {
  const mac = createHmac('sha256', secret).update(`${unixSeconds}.${body}`).digest('hex');
  return `t=${unixSeconds},v1=${mac}`;
}

export interface DispatcherDeps {
  webhooks: WebhookRepository;
  logger: Logger;
  clock: { now(): Date };
  fetch?: typeof fetch;
  intervalMs?: number;
  timeoutMs?: number;
  batch?: number;
}

export interface WebhookDispatcher {
  /** Sends every delivery due now; resolves to the number attempted. */
  tick(): Promise<number>;
  stop(): Promise<void>;
}

/**
 * Delivers due webhook deliveries. Claims use a lease in the store, so several dispatchers (worker replicas) never
 * send the same delivery at once. A 2xx answer is success; anything else, a timeout or a network error is a failed
 * attempt that the store reschedules with exponential backoff until it gives up.
 */
export function startWebhookDispatcher(deps: DispatcherDeps): WebhookDispatcher {
  const doFetch = deps.fetch ?? fetch;
  const timeoutMs = deps.timeoutMs ?? 10_000;
  let running: Promise<number> | null = null;
  let stopped = false;

  async function send(d: DueDelivery): Promise<void> {
    const t = Math.floor(deps.clock.now().getTime() / 1000);
    try {
      const res = await doFetch(d.url, {
        method: 'POST',
        headers: {
          'content-type': 'application/json',
          [SIGNATURE_HEADER]: signatureHeader(d.secret, t, d.payload),
          'Plumbline-Event': d.event,
          'Plumbline-Delivery': String(d.id),
          'user-agent': 'plumbline-webhooks/1',
        },
        body: d.payload,
        redirect: 'manual',
        signal: AbortSignal.timeout(timeoutMs),
      });
      await res.body?.cancel().catch(() => undefined);
      if (res.status >= 200 && res.status < 300) deps.webhooks.markDelivered(d.id, res.status);
      else deps.webhooks.markFailed(d.id, { statusCode: res.status, error: `HTTP ${res.status}` }, undefined, deps.clock.now());
    } catch (err) {
      deps.webhooks.markFailed(d.id, { statusCode: null, error: (err as Error).message }, undefined, deps.clock.now());
      deps.logger.warn({ deliveryId: d.id, webhookId: d.webhook_id, err }, 'webhook delivery failed');
    }
  }

  async function tickOnce(): Promise<number> {
    const due = deps.webhooks.claimDue(deps.clock.now(), deps.batch ?? 10);
    await Promise.all(due.map(send));
    return due.length;
  }

  const tick = (): Promise<number> => {
    running ??= tickOnce().finally(() => {
      running = null;
    });
    return running;
  };

  const timer = setInterval(() => {
    if (!stopped) tick().catch((err: unknown) => deps.logger.error({ err }, 'webhook dispatcher tick failed'));
  }, deps.intervalMs ?? 1000);
  timer.unref();

  return {
    tick,
    async stop() {
      stopped = true;
      clearInterval(timer);
      await running;
    },
  };
}
