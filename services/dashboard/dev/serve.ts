import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildDashboard } from '../build.ts';
import { createFixtureServer } from './fixture-api.ts';

// Usage: node --import tsx services/dashboard/dev/serve.ts [port] — rebuilds, then serves dist/ with fixture data.
const here = dirname(fileURLToPath(import.meta.url));
const dist = await buildDashboard(join(here, '..', 'dist'));
const port = Number(process.argv[2] ?? 5178);
const token = 'fixture-lead-token';
createFixtureServer(dist, token).listen(port, '127.0.0.1', () => {
  console.log(`dashboard with fixture data on http://127.0.0.1:${port}/  (token: ${token})`);
});
