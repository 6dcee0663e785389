import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadConfig } from '@plumbline/config';
import { createLogger, openResources, startServer, DEFAULT_DASHBOARD_DIR } from '@plumbline/api';
import { createThreadedAnalyze, startEmbeddedWorker } from '@plumbline/worker';
import { EXIT, parseFlags, type Command } from '../args.ts';
import { ensureDemoTokens } from '../demo-tokens.ts';
import { findSeeds, loadSeeds } from '../seeds.ts';
import { runNodeScript } from './simulate.ts';
import { dashboardBuildIsStale } from '../dashboard-freshness.ts';

const ROOT = fileURLToPath(new URL('../../../../', import.meta.url));
const DASHBOARD_BUILD = `${ROOT}services/dashboard/build.ts`;
const DASHBOARD_SOURCES = [`${ROOT}services/dashboard/src`, DASHBOARD_BUILD];

const USAGE = `Usage: plumbline serve [--demo] [--seed-dir DIR]

Starts the HTTP API and the dashboard. Without REDIS_URL (embedded mode) the analysis worker and the webhook
dispatcher run in the same process on the SQLite queue; with REDIS_URL only the API runs and workers are started
separately (npm run worker).

  --demo           build the dashboard when it is missing or older than its sources, create demo tokens (printed, and kept in
                   <data dir>/demo-tokens.json), upload every bundle of the seed directory that is not
                   stored yet as its robot would, and print analysis progress. Same as PLUMBLINE_DEMO=1.
  --seed-dir DIR   seed bundles (default: seed-runs/ of the repository)
`;

/** This process composes the API and the worker (the one place both are started together). */
export const serveCommand: Command = {
  name: 'serve',
  summary: 'run the API, dashboard and (embedded mode) the worker',
  usage: USAGE,
  async run(argv) {
    const { values } = parseFlags(argv, { demo: { type: 'boolean' }, 'seed-dir': { type: 'string' } }, false);
    const config = loadConfig();
    const demo = values.demo === true || config.demo;
    // In the demo a person reads stdout: the JSON logs go to a file beside the data instead.
    const logFile = demo ? join(config.dataDir, 'plumbline.log') : undefined;
    const logger = createLogger({ level: config.logLevel, service: 'plumbline', ...(logFile ? { file: logFile } : {}) });
    const say = (line: string) => process.stdout.write(`${line}\n`);
    if (demo && dashboardBuildIsStale(`${DEFAULT_DASHBOARD_DIR}index.html`, DASHBOARD_SOURCES)) {
      say('building the dashboard…');
      const code = await runNodeScript(DASHBOARD_BUILD, []);
      if (code !== 0) say(`dashboard build failed (exit ${code}); the API still starts`);
    }
    const res = openResources(config, logger);
    const { deps } = res;
    // Analysis in worker threads: the CPU-bound work never blocks the HTTP event loop of this process.
    const threads = config.mode === 'embedded' ? createThreadedAnalyze(config.workerConcurrency, { twoThreads: config.analysisTwoThreads }) : null;
    const worker = threads
      ? await startEmbeddedWorker(config, {
          store: deps.store,
          blobs: deps.blobs,
          queue: deps.queue,
          logger,
          clock: deps.clock,
          analyze: threads.analyze,
          onJobFinished: (s, outcome) => deps.metrics?.jobDuration.observe({ outcome }, s),
        })
      : null;
    const { app, url } = await startServer(config, deps);
    const publicUrl = config.publicUrl ?? url;
    say(`Plumbline listening on ${url} (${config.mode} mode${worker ? `, worker concurrency ${config.workerConcurrency}` : ''})`);
    let stopping = false;
    const stop = async (signal: string) => {
      if (stopping) return;
      stopping = true;
      logger.info({ signal }, 'shutting down');
      await app.close();
      await worker?.close();
      await threads?.close();
      await res.close();
      process.exit(EXIT.ok);
    };
    process.once('SIGINT', () => void stop('SIGINT'));
    process.once('SIGTERM', () => void stop('SIGTERM'));

    if (demo) {
      const tokens = ensureDemoTokens(deps.store, config.dataDir);
      say(`\nDashboard: ${publicUrl}/   API reference: ${publicUrl}/reference   Logs: ${logFile}`);
      say(`Tokens (also in ${config.dataDir}/demo-tokens.json):`);
      for (const [role, t] of Object.entries(tokens.roles)) say(`  ${role.padEnd(11)} ${t}`);
      say('Open the dashboard and sign in with the lead token; robot tokens follow once the demo runs are uploaded.');
      const seedDir = values['seed-dir'] ?? `${ROOT}seed-runs`;
      const paths = await findSeeds(seedDir);
      say(`\nseed bundles in ${seedDir}: ${paths.length}`);
      const out = await loadSeeds(app, deps.store, paths, (r) => tokens.robotToken(r), say);
      for (const [robot, t] of Object.entries(tokens.robots())) say(`  robot ${robot.padEnd(10)} ${t}`);
      say(`uploaded ${out.loaded.length}, already stored ${out.skipped}, refused ${out.refused.length}`);
      if (worker && out.loaded.length > 0) void reportProgress(deps.store, out.loaded.map((l) => l.id), say);
    }
    return new Promise<number>(() => undefined);
  },
};

/** Prints analysis progress of the seeded runs until each is done, rejected or failed. */
async function reportProgress(store: import('@plumbline/store').Store, ids: string[], say: (l: string) => void): Promise<void> {
  let last = '';
  for (;;) {
    const runs = ids.map((id) => store.runs.get(id));
    const finished = runs.filter((r) => r && (r.status === 'done' || r.status === 'rejected' || r.status === 'failed'));
    const line = `analysed ${finished.length}/${ids.length}`;
    if (line !== last) say(line);
    last = line;
    if (finished.length === ids.length) {
      const byVerdict = new Map<string, number>();
      for (const r of finished) byVerdict.set(r?.verdict ?? r?.status ?? '?', (byVerdict.get(r?.verdict ?? r?.status ?? '?') ?? 0) + 1);
      if (ids.length > 0) say(`all seed runs analysed: ${[...byVerdict].map(([k, n]) => `${n} ${k}`).join(', ')}`);
      return;
    }
    await new Promise((r) => setTimeout(r, 1000));
  }
}
