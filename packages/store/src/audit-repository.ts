import type { AuditEntry } from '@plumbline/contracts';
import { isoNow } from './rows.ts';
import type { AuditRepository, Db } from './types.ts';

interface AuditRow {
  id: number;
  at: string;
  actor: string;
  action: string;
  subject: string;
  detail_json: string;
}

function toEntry(row: AuditRow): AuditEntry {
  return { id: row.id, at: row.at, actor: row.actor, action: row.action, subject: row.subject, detail: JSON.parse(row.detail_json) as Record<string, unknown> };
}

/** The audit log. Append-only: migration 0001 installs triggers that abort any UPDATE or DELETE on the table. */
export function createAuditRepository(db: Db): AuditRepository {
  const insert = db.prepare(
    'INSERT INTO audit_log (at, actor, action, subject, detail_json) VALUES (?, ?, ?, ?, ?) RETURNING id, at, actor, action, subject, detail_json',
  );
  return {
    append(actor, action, subject, detail = {}) {
      return toEntry(insert.get(isoNow(), actor, action, subject, JSON.stringify(detail)) as AuditRow);
    },
    list(opts = {}) {
      const where: string[] = [];
      const params: unknown[] = [];
      if (opts.subject !== undefined) {
        where.push('subject = ?');
        params.push(opts.subject);
      }
      if (opts.beforeId !== undefined) {
        where.push('id < ?');
        params.push(opts.beforeId);
      }
      const sql = `SELECT id, at, actor, action, subject, detail_json FROM audit_log ${where.length ? `WHERE ${where.join(' AND ')}` : ''}
        ORDER BY id DESC LIMIT ?`;
      return (db.prepare(sql).all(...params, Math.min(Math.max(opts.limit ?? 100, 1), 1000)) as AuditRow[]).map(toEntry);
    },
  };
}
