import { createAuditRepository } from './audit-repository.ts';
import { changeWatchOf } from './change-watch.ts';
import { createReportRepository } from './report-repository.ts';
import { createReviewRepository } from './review-repository.ts';
import { createRobotRepository } from './robot-repository.ts';
import { createRunRepository } from './run-repository.ts';
import { createTokenRepository } from './token-repository.ts';
import type { Db, Store, StoreStats } from './types.ts';
import { createUploadRepository } from './upload-repository.ts';
import { createWebhookRepository } from './webhook-repository.ts';
import { createMaintenanceRepository } from './maintenance-repository.ts';
import { createPolicyRepository } from './policy-repository.ts';
import { createFeedbackRepository } from './feedback-repository.ts';

function tally(rows: { k: string | null; n: number }[]): Record<string, number> {
  const out: Record<string, number> = {};
  for (const r of rows) out[r.k ?? 'none'] = r.n;
  return out;
}

/** All repositories over one database (opened and migrated by `openDatabase`). */
export function createStore(db: Db): Store {
  const byStatus = db.prepare('SELECT status AS k, count(*) AS n FROM runs GROUP BY status');
  const byVerdict = db.prepare('SELECT verdict AS k, count(*) AS n FROM runs WHERE verdict IS NOT NULL GROUP BY verdict');
  const pendingDeliveries = db.prepare(`SELECT count(*) FROM webhook_deliveries WHERE status = 'pending'`).pluck();
  const openUploads = db.prepare(`SELECT count(*) FROM upload_sessions WHERE state = 'open'`).pluck();
  const ping = db.prepare('SELECT 1').pluck();
  const changes = changeWatchOf(db);

  return {
    runs: createRunRepository(db),
    reports: createReportRepository(db),
    reviews: createReviewRepository(db),
    audit: createAuditRepository(db),
    tokens: createTokenRepository(db),
    webhooks: createWebhookRepository(db),
    uploads: createUploadRepository(db),
    robots: createRobotRepository(db),
    maintenance: createMaintenanceRepository(db),
    policies: createPolicyRepository(db),
    feedback: createFeedbackRepository(db),
    stats(): StoreStats {
      const runsByStatus = tally(byStatus.all() as { k: string; n: number }[]);
      return {
        runs_total: Object.values(runsByStatus).reduce((a, b) => a + b, 0),
        runs_by_status: runsByStatus,
        runs_by_verdict: tally(byVerdict.all() as { k: string; n: number }[]),
        webhook_deliveries_pending: pendingDeliveries.get() as number,
        open_uploads: openUploads.get() as number,
      };
    },
    ping() {
      try {
        return ping.get() === 1;
      } catch {
        return false;
      }
    },
    withOneChangeCheck: (fn) => changes.withOneCheck(fn),
  };
}
