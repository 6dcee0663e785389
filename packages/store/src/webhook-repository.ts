import { randomUUID } from 'node:crypto';
import type { WebhookDelivery, WebhookEvent, WebhookInfo } from '@plumbline/contracts';
import { isoNow } from './rows.ts';
import type { Db, DueDelivery, WebhookRepository } from './types.ts';

interface WebhookRow {
  id: string;
  url: string;
  events_json: string;
  secret: string;
  active: number;
  created_at: string;
}

function toInfo(row: WebhookRow): WebhookInfo {
  return { id: row.id, url: row.url, events: JSON.parse(row.events_json) as WebhookEvent[], created_at: row.created_at, active: row.active === 1 };
}

/**
 * Delay before attempt `attempts + 1` after `attempts` failures: base * 2^(attempts-1), capped. Exponential backoff
 * is common practice for webhook retries.
 */
export function deliveryBackoffMs(attempts: number, baseDelayMs: number, maxDelayMs: number): number {
  return Math.min(maxDelayMs, baseDelayMs * 2 ** Math.max(0, attempts - 1));
}

/** Webhook subscriptions and their delivery outbox (claimed with a lease, retried with exponential backoff). */
export function createWebhookRepository(db: Db): WebhookRepository {
  const insert = db.prepare('INSERT INTO webhooks (id, url, events_json, secret, active, created_at) VALUES (?, ?, ?, ?, 1, ?)');
  const byId = db.prepare('SELECT * FROM webhooks WHERE id = ?');
  const all = db.prepare('SELECT * FROM webhooks ORDER BY created_at, id');
  const deactivate = db.prepare('UPDATE webhooks SET active = 0 WHERE id = ? AND active = 1');
  const subscribers = db.prepare(`SELECT webhooks.id FROM webhooks, json_each(webhooks.events_json) AS e WHERE webhooks.active = 1 AND e.value = ?`);
  const insertDelivery = db.prepare(
    `INSERT INTO webhook_deliveries (webhook_id, event, payload, status, next_attempt_at, created_at) VALUES (?, ?, ?, 'pending', ?, ?)`,
  );
  const due = db.prepare(
    `SELECT d.id, d.webhook_id, w.url, w.secret, d.event, d.payload, d.attempts
     FROM webhook_deliveries d JOIN webhooks w ON w.id = d.webhook_id
     WHERE d.status = 'pending' AND d.next_attempt_at <= ? ORDER BY d.next_attempt_at, d.id LIMIT ?`,
  );
  const lease = db.prepare('UPDATE webhook_deliveries SET next_attempt_at = ? WHERE id = ?');
  const delivered = db.prepare(
    `UPDATE webhook_deliveries SET status = 'delivered', attempts = attempts + 1, last_status_code = ?, last_error = NULL,
       next_attempt_at = NULL WHERE id = ?`,
  );
  const attemptsOf = db.prepare('SELECT attempts FROM webhook_deliveries WHERE id = ?').pluck();
  const failed = db.prepare(
    'UPDATE webhook_deliveries SET status = ?, attempts = ?, last_status_code = ?, last_error = ?, next_attempt_at = ? WHERE id = ?',
  );
  const byWebhook = db.prepare(
    `SELECT id, webhook_id, event, attempts, status, last_status_code, last_error, next_attempt_at, created_at
     FROM webhook_deliveries WHERE webhook_id = ? ORDER BY id DESC LIMIT ?`,
  );

  const enqueueEvent = db.transaction((event: WebhookEvent, payload: unknown, now: Date): number => {
    const ids = subscribers.pluck().all(event) as string[];
    const text = JSON.stringify(payload);
    const at = isoNow(now);
    for (const id of ids) insertDelivery.run(id, event, text, at, at);
    return ids.length;
  });

  const claimDue = db.transaction((now: Date, limit: number, leaseMs: number): DueDelivery[] => {
    const rows = due.all(isoNow(now), limit) as DueDelivery[];
    const until = isoNow(new Date(now.getTime() + leaseMs));
    for (const r of rows) lease.run(until, r.id);
    return rows;
  });

  return {
    create(input) {
      const id = randomUUID();
      insert.run(id, input.url, JSON.stringify(input.events), input.secret, isoNow());
      return toInfo(byId.get(id) as WebhookRow);
    },
    list: () => (all.all() as WebhookRow[]).map(toInfo),
    get(id) {
      const row = byId.get(id) as WebhookRow | undefined;
      return row ? toInfo(row) : null;
    },
    remove: (id) => deactivate.run(id).changes > 0,
    enqueueEvent: (event, payload, now = new Date()) => enqueueEvent(event, payload, now),
    claimDue: (now, limit, leaseMs = 60_000) => claimDue.immediate(now, limit, leaseMs),
    markDelivered(id, statusCode) {
      delivered.run(statusCode, id);
    },
    markFailed(id, failure, policy = {}, now = new Date()) {
      const attempts = ((attemptsOf.get(id) as number | undefined) ?? 0) + 1;
      const maxAttempts = policy.maxAttempts ?? 8;
      const giveUp = attempts >= maxAttempts;
      const next = giveUp ? null : isoNow(new Date(now.getTime() + deliveryBackoffMs(attempts, policy.baseDelayMs ?? 10_000, policy.maxDelayMs ?? 3_600_000)));
      const status = giveUp ? 'failed' : 'pending';
      failed.run(status, attempts, failure.statusCode ?? null, failure.error.slice(0, 2000), next, id);
      return status;
    },
    deliveries: (webhookId, limit = 100) => byWebhook.all(webhookId, limit) as WebhookDelivery[],
  };
}
