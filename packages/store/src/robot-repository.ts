import type { RobotSummary } from '@plumbline/contracts';
import { RUN_COLUMNS, toRunSummary, type RunRow } from './rows.ts';
import type { Db, RobotRepository } from './types.ts';

/** The fleet: each robot with its run count, latest run and a short trend of recent scores. */
export function createRobotRepository(db: Db): RobotRepository {
  const robots = db.prepare('SELECT robot_id, site FROM robots ORDER BY robot_id');
  const one = db.prepare('SELECT robot_id, site FROM robots WHERE robot_id = ?');
  const count = db.prepare('SELECT count(*) FROM runs WHERE robot_id = ?').pluck();
  const latest = db.prepare(`SELECT ${RUN_COLUMNS} FROM runs WHERE robot_id = ? ORDER BY received_at DESC, id DESC LIMIT 1`);
  const scores = db.prepare(
    `SELECT score FROM runs WHERE robot_id = ? AND score IS NOT NULL
     ORDER BY received_at DESC, id DESC LIMIT ?`,
  ).pluck();

  const summarise = (row: { robot_id: string; site: string | null }, recent: number): RobotSummary => {
    const last = latest.get(row.robot_id) as RunRow | undefined;
    return {
      robot_id: row.robot_id,
      site: row.site,
      runs: count.get(row.robot_id) as number,
      latest_run: last ? toRunSummary(last) : null,
      recent_scores: (scores.all(row.robot_id, recent) as number[]).reverse(),
    };
  };

  return {
    list: (recent = 10) => (robots.all() as { robot_id: string; site: string | null }[]).map((r) => summarise(r, recent)),
    get(robotId, recent = 10) {
      const row = one.get(robotId) as { robot_id: string; site: string | null } | undefined;
      return row ? summarise(row, recent) : null;
    },
  };
}
