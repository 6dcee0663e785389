import { randomUUID } from 'node:crypto';
import { isoNow } from './rows.ts';
import type { Db, UploadRepository, UploadSessionRecord } from './types.ts';

const COLUMNS = 'id, robot_id, run_id, size_bytes, sha256, received_bytes, state, expires_at, run, temp_path, filename, created_at';

/** Resumable upload sessions; the received offset only moves by compare-and-set. */
export function createUploadRepository(db: Db): UploadRepository {
  const insert = db.prepare(
    `INSERT INTO upload_sessions (id, robot_id, run_id, size_bytes, sha256, filename, temp_path, created_at, updated_at, expires_at)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  );
  const byId = db.prepare(`SELECT ${COLUMNS} FROM upload_sessions WHERE id = ?`);
  const advance = db.prepare(
    `UPDATE upload_sessions SET received_bytes = ?, updated_at = ? WHERE id = ? AND state = 'open' AND received_bytes = ?`,
  );
  const complete = db.prepare(`UPDATE upload_sessions SET state = 'complete', run = ?, updated_at = ? WHERE id = ?`);
  const abort = db.prepare(`UPDATE upload_sessions SET state = 'aborted', updated_at = ? WHERE id = ? AND state = 'open'`);
  const expired = db.prepare(`SELECT ${COLUMNS} FROM upload_sessions WHERE state = 'open' AND expires_at < ? ORDER BY expires_at LIMIT ?`);

  return {
    create(input, now = new Date()) {
      const id = input.id ?? randomUUID();
      const at = isoNow(now);
      const expires = isoNow(new Date(now.getTime() + input.ttl_ms));
      insert.run(id, input.robot_id, input.run_id, input.size_bytes, input.sha256, input.filename ?? null, input.temp_path, at, at, expires);
      return byId.get(id) as UploadSessionRecord;
    },
    get: (id) => (byId.get(id) as UploadSessionRecord | undefined) ?? null,
    advance: (id, fromOffset, toOffset, now = new Date()) => advance.run(toOffset, isoNow(now), id, fromOffset).changes > 0,
    complete(id, runId) {
      complete.run(runId, isoNow(), id);
    },
    abort: (id) => abort.run(isoNow(), id).changes > 0,
    expired: (now, limit = 100) => expired.all(isoNow(now), limit) as UploadSessionRecord[],
  };
}
