/**
 * The Fleet workload: finished runs across a fleet of robots, with flags and reviews, in a SQLite database created
 * by the store's own migrations (openDatabase). Rows are inserted by set-based SQL in one transaction (a bulk path
 * on the same schema; the repositories insert one run per transaction, which is the upload path, not a loader).
 * Cached in bench/out/ under its size, since the content is a pure function of it.
 */
import { existsSync } from 'node:fs';
import { mkdir, readFile, rename, rm, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { openDatabase } from '@plumbline/store';

export interface FleetWorkload {
  dbPath: string;
  runs: number;
  robots: number;
  flags: number;
  reviews: number;
  bytes: number;
  /** seconds to build it now; null when the cached database was reused */
  insertS: number | null;
  /** seconds the build took when the cached database was made (build.json beside it) */
  firstInsertS: number | null;
}

const BIRDS = ['kestrel', 'plover', 'heron', 'wren', 'tern'];
const FLAG_KINDS = ['scale-drift', 'time-offset', 'loop-drift', 'imu-gap'];

/** Robot k of the fleet: kestrel-01, plover-01, …, then kestrel-02, … (birds × numbers). */
export function fleetRobotId(k: number): string {
  return `${BIRDS[k % BIRDS.length]}-${String(Math.floor(k / BIRDS.length) + 1).padStart(2, '0')}`;
}

function populate(dbPath: string, runs: number, robots: number): void {
  const db = openDatabase(dbPath);
  try {
    db.pragma('foreign_keys = OFF'); // flags point at report 0, which this bulk fixture does not create
    db.transaction(() => {
      const robot = db.prepare('INSERT INTO robots (robot_id, site, created_at) VALUES (?, ?, ?)');
      db.exec('CREATE TEMP TABLE robot_names (k INTEGER PRIMARY KEY, name TEXT)');
      const name = db.prepare('INSERT INTO robot_names VALUES (?, ?)');
      for (let k = 0; k < robots; k++) {
        robot.run(fleetRobotId(k), k % 2 ? 'northgate-yard' : 'harbourside-depot', '2026-01-01T00:00:00.000Z');
        name.run(k, fleetRobotId(k));
      }
      // run n: robot n % R, received 30 s after run n-1, verdict n % 3, score (37 n) % 101; flags on every 10th
      // run; a review (accept or reject) on every 4th run.
      db.exec(`
        WITH RECURSIVE seq(n) AS (SELECT 0 UNION ALL SELECT n + 1 FROM seq WHERE n < ${runs - 1})
        INSERT INTO runs (id, robot_id, run_id, site, started_at, received_at, status, sha256, size_bytes, score, verdict,
                          worst_severity, priority, duration_s, distance_m, decision, reviewed_at)
        SELECT printf('r%07d', n), (SELECT name FROM robot_names WHERE k = n % ${robots}), 'shift-' || (n / ${robots}),
               CASE (n % ${robots}) % 2 WHEN 1 THEN 'northgate-yard' ELSE 'harbourside-depot' END,
               strftime('%Y-%m-%dT%H:%M:%fZ', 1767225600 + n * 30 - 28800, 'unixepoch'),
               strftime('%Y-%m-%dT%H:%M:%fZ', 1767225600 + n * 30, 'unixepoch'),
               'done', printf('%064x', n), 128000000, (n * 37) % 101,
               CASE n % 3 WHEN 0 THEN 'sound' WHEN 1 THEN 'doubtful' ELSE 'unfit' END,
               CASE n % 3 WHEN 0 THEN NULL WHEN 1 THEN 'warn' ELSE 'critical' END,
               CASE WHEN n % 4 = 0 OR n % 3 = 0 THEN 0 ELSE 1 + n % 3 END, 28800, 9000 + n % 1000,
               CASE WHEN n % 4 = 0 THEN (CASE n % 3 WHEN 2 THEN 'reject' ELSE 'accept' END) END,
               CASE WHEN n % 4 = 0 THEN strftime('%Y-%m-%dT%H:%M:%fZ', 1767225600 + n * 30 + 3600, 'unixepoch') END
        FROM seq;
        INSERT INTO flags (run, report_id, flag_id, kind, severity, t_start, t_end, value)
        SELECT id, 0, 'f-1', CASE (CAST(substr(id, 2) AS INTEGER) / 10) % 4
                 ${FLAG_KINDS.map((k, i) => `WHEN ${i} THEN '${k}'`).join(' ')} END, 'warn', 0, 1, NULL
        FROM runs WHERE CAST(substr(id, 2) AS INTEGER) % 10 = 0;
        INSERT INTO reviews (run, decision, note, flags_json, reviewer, created_at)
        SELECT id, decision, 'checked on the dashboard', '[]', 'ops-lead', reviewed_at FROM runs WHERE decision IS NOT NULL;
      `);
    })();
    db.pragma('foreign_keys = ON');
    db.exec('ANALYZE');
  } finally {
    db.close();
  }
}

function countOf(dbPath: string, table: string): number {
  const db = openDatabase(dbPath);
  try {
    return db.prepare(`SELECT count(*) FROM ${table}`).pluck().get() as number;
  } finally {
    db.close();
  }
}

/** Returns the cached Fleet database for (runs, robots), building it first when missing. */
export async function ensureFleet(outRoot: string, runs = 100_000, robots = 500): Promise<FleetWorkload> {
  const dir = join(outRoot, `fleet-${runs}x${robots}`);
  const dbPath = join(dir, 'plumbline.sqlite');
  let insertS: number | null = null;
  if (!existsSync(dbPath)) {
    const tmp = `${dir}.tmp-${process.pid}`;
    await rm(tmp, { recursive: true, force: true });
    await mkdir(tmp, { recursive: true });
    const t0 = performance.now();
    populate(join(tmp, 'plumbline.sqlite'), runs, robots);
    insertS = (performance.now() - t0) / 1000;
    await writeFile(join(tmp, 'build.json'), `${JSON.stringify({ insertS })}\n`);
    await rm(dir, { recursive: true, force: true });
    await rename(tmp, dir);
  }
  const build = existsSync(join(dir, 'build.json')) ? (JSON.parse(await readFile(join(dir, 'build.json'), 'utf8')) as { insertS: number }) : null;
  return {
    firstInsertS: build?.insertS ?? null,
    dbPath, runs: countOf(dbPath, 'runs'), robots: countOf(dbPath, 'robots'), flags: countOf(dbPath, 'flags'),
    reviews: countOf(dbPath, 'reviews'), bytes: (await stat(dbPath)).size, insertS,
  };
}
