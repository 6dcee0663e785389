import type { Estimates, MaintenanceFinding } from '@plumbline/contracts';
import type { FindingsSaved, MaintenanceRepository } from './fleet-types.ts';
import type { Db } from './types.ts';




interface FindingRow {
  id: string;
  finding_json: string;
  detected_at: string;
  metric: string;
}

/** Robot maintenance findings and the per-run estimates they are computed from. */
export function createMaintenanceRepository(db: Db): MaintenanceRepository {
  const estimates = db.prepare(
    `SELECT id AS run, run_id, started_at, estimates_json FROM (
       SELECT r.id, r.run_id, r.started_at, r.received_at, json_extract(rep.report_json, '$.estimates') AS estimates_json
       FROM runs r JOIN reports rep ON rep.run = r.id AND rep.is_current = 1
       WHERE r.robot_id = ? AND r.status = 'done'
       ORDER BY COALESCE(r.started_at, r.received_at) DESC, r.id DESC LIMIT ?)
     ORDER BY COALESCE(started_at, received_at), run`,
  );
  const openOf = db.prepare(`SELECT id, finding_json, detected_at, metric FROM maintenance_findings WHERE robot_id = ? AND status = 'open'`);
  const insert = db.prepare(
    `INSERT INTO maintenance_findings (id, robot_id, metric, severity, status, finding_json, detected_at, updated_at)
     VALUES (?, ?, ?, ?, 'open', ?, ?, ?)`,
  );
  const update = db.prepare('UPDATE maintenance_findings SET severity = ?, status = ?, finding_json = ?, updated_at = ? WHERE id = ?');
  const byId = db.prepare('SELECT 1 FROM maintenance_findings WHERE id = ?').pluck();

  const save = db.transaction((robotId: string, findings: readonly MaintenanceFinding[], nowIso: string, within?: (s: FindingsSaved) => void) => {
    const open = new Map((openOf.all(robotId) as FindingRow[]).map((r) => [r.metric, r]));
    const saved: FindingsSaved = { opened: [], updated: [], resolved: [] };
    for (const f of findings) {
      const prev = open.get(f.metric);
      if (prev) {
        open.delete(f.metric);
        const kept: MaintenanceFinding = { ...f, id: prev.id, detected_at: prev.detected_at, updated_at: nowIso, status: 'open' };
        update.run(kept.severity, 'open', JSON.stringify(kept), nowIso, prev.id);
        saved.updated.push(kept);
      } else {
        // A resolved finding may already hold this id (same onset run): make the new one distinct.
        const id = byId.get(f.id) === undefined ? f.id : `${f.id}@${nowIso}`;
        const fresh: MaintenanceFinding = { ...f, id, detected_at: nowIso, updated_at: nowIso, status: 'open' };
        insert.run(id, robotId, f.metric, f.severity, JSON.stringify(fresh), nowIso, nowIso);
        saved.opened.push(fresh);
      }
    }
    for (const row of open.values()) {
      const done: MaintenanceFinding = { ...(JSON.parse(row.finding_json) as MaintenanceFinding), status: 'resolved', updated_at: nowIso };
      update.run(done.severity, 'resolved', JSON.stringify(done), nowIso, row.id);
      saved.resolved.push(done);
    }
    within?.(saved);
    return saved;
  });

  return {
    robotEstimates(robotId, limit = 60) {
      return (estimates.all(robotId, limit) as { run: string; run_id: string; started_at: string | null; estimates_json: string }[]).map((r) => ({
        run: r.run,
        run_id: r.run_id,
        started_at: r.started_at,
        estimates: JSON.parse(r.estimates_json) as Estimates,
      }));
    },
    saveFindings: (robotId, findings, nowIso, within) => save.immediate(robotId, findings, nowIso, within),
    list(opts = {}) {
      const where: string[] = [];
      const args: unknown[] = [];
      if (opts.robotId !== undefined) {
        where.push('robot_id = ?');
        args.push(opts.robotId);
      }
      const status = opts.status ?? 'open';
      if (status !== 'all') {
        where.push('status = ?');
        args.push(status);
      }
      const sql = `SELECT finding_json FROM maintenance_findings ${where.length ? `WHERE ${where.join(' AND ')}` : ''}
                   ORDER BY updated_at DESC, id LIMIT ?`;
      args.push(opts.limit ?? 500);
      return (db.prepare(sql).pluck().all(...args) as string[]).map((t) => JSON.parse(t) as MaintenanceFinding);
    },
  };
}
