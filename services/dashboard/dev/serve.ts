import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildDashboard } from '../build.ts';
import { readdir, readFile } from 'node:fs/promises';
import { Report } from '@plumbline/contracts';
import { buildFixtureRuns, createFixtureServer, runsFromReports } from './fixture-api.ts';

// Usage: node --import tsx services/dashboard/dev/serve.ts [port] [reports-dir] — rebuilds, then serves dist/ with
// fixture data, or with the report JSON files (plumbline-report/1) found in reports-dir.
const here = dirname(fileURLToPath(import.meta.url));
const dist = await buildDashboard(join(here, '..', 'dist'));
const port = Number(process.argv[2] ?? 5178);
const token = 'fixture-lead-token';
const reportsDir = process.argv[3];
let runs = buildFixtureRuns();
if (reportsDir) {
  const files = (await readdir(reportsDir)).filter((f) => f.endsWith('.json')).sort();
  runs = runsFromReports(await Promise.all(files.map(async (f) => Report.parse(JSON.parse(await readFile(join(reportsDir, f), 'utf8'))))));
}
createFixtureServer(dist, token, runs).listen(port, '127.0.0.1', () => {
  console.log(`dashboard with fixture data on http://127.0.0.1:${port}/  (token: ${token})`);
});
