/**
 * `npm run bench` — every benchmark at full size, results in bench/results.json and a table on stdout.
 * `npm run bench -- --smoke` — the same at small sizes (CI-safe), results in bench/out/results.smoke.json.
 * `--only analysis,ingest,list,burst,inertial,pose-graph` picks benchmarks; with `--merge` their figures replace
 * those in the existing results file (the others are kept), otherwise they go to bench/results.local.json.
 * Workloads are cached in bench/out/.
 * Redis for the BullMQ burst: REDIS_URL or redis://127.0.0.1:6379 (skipped with a notice when none answers).
 */
import { existsSync } from 'node:fs';
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { formatTable } from './lib/table.ts';
import { mergeResults, runSuite, SIZES, type SuiteResult } from './lib/suite.ts';

const BENCH = fileURLToPath(new URL('.', import.meta.url));
const args = process.argv.slice(2);
const smoke = args.includes('--smoke');
const onlyArg = args[args.indexOf('--only') + 1];
const only = args.includes('--only') && onlyArg ? new Set(onlyArg.split(',')) : undefined;
const outRoot = `${BENCH}out`;
await mkdir(outRoot, { recursive: true });
const merge = args.includes('--merge');
const resultsPath = smoke ? `${outRoot}/results.smoke.json` : only && !merge ? `${BENCH}results.local.json` : `${BENCH}results.json`;
const previous: SuiteResult | null = merge && existsSync(resultsPath) ? (JSON.parse(await readFile(resultsPath, 'utf8')) as SuiteResult) : null;
const combine = (r: SuiteResult): SuiteResult => (previous && only ? mergeResults(previous, r, only) : r);
const result = await runSuite(smoke ? SIZES.smoke : SIZES.full, {
  outRoot,
  // the bench is a tool outside the services; it reads its own environment like the test helpers do
  redisUrl: process.env.REDIS_URL ?? 'redis://127.0.0.1:6379',
  ...(only ? { only } : {}),
  log: (line) => console.error(`[bench ${new Date().toISOString().slice(11, 19)}] ${line}`),
  onProgress: (r) => writeFile(resultsPath, `${JSON.stringify(combine(r), null, 2)}\n`),
});
const final = combine(result);
await writeFile(resultsPath, `${JSON.stringify(final, null, 2)}\n`);
console.log(formatTable(final));
console.log(`\nwritten to ${resultsPath}`);
process.exitCode = result.errors.length > 0 ? 1 : 0;
