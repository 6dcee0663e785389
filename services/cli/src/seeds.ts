import { createReadStream, existsSync } from 'node:fs';
import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import type { FastifyInstance } from 'fastify';
import { inspectBundle } from '@plumbline/bundle';
import type { Store } from '@plumbline/store';
import { packDirectory } from './pack.ts';

export interface SeedEntry {
  path: string;
  robotId: string;
  runId: string;
}

const ARCHIVE = /\.(tar\.gz|tgz|tar|zip)$/i;

/** Bundles in a seed directory: sub-directories with run.json (or bundle/run.json, the simulator's layout) and archives. */
export async function findSeeds(dir: string): Promise<string[]> {
  if (!existsSync(dir)) return [];
  const out: string[] = [];
  for (const d of (await readdir(dir, { withFileTypes: true })).sort((a, b) => (a.name < b.name ? -1 : 1))) {
    const full = join(dir, d.name);
    if (d.isFile() && ARCHIVE.test(d.name)) out.push(full);
    else if (d.isDirectory() && existsSync(join(full, 'run.json'))) out.push(full);
    else if (d.isDirectory() && existsSync(join(full, 'bundle', 'run.json'))) out.push(join(full, 'bundle'));
    else if (d.isDirectory()) for (const sub of await findSeeds(full)) out.push(sub);
  }
  return out;
}

export interface SeedOutcome {
  loaded: Array<{ runId: string; id: string }>;
  skipped: number;
  refused: Array<{ path: string; reason: string }>;
}

/**
 * Uploads every seed bundle not yet stored, through the HTTP API in-process (`inject`) with the robot's own token,
 * exactly as a robot pushing it would.
 */
export async function loadSeeds(
  app: FastifyInstance,
  store: Store,
  paths: string[],
  tokenFor: (robotId: string) => string,
  log: (line: string) => void,
): Promise<SeedOutcome> {
  const outcome: SeedOutcome = { loaded: [], skipped: 0, refused: [] };
  for (const path of paths) {
    let manifest;
    try {
      ({ manifest } = await inspectBundle(path));
    } catch (err) {
      outcome.refused.push({ path, reason: (err as Error).message });
      log(`seed ${path}: not a valid bundle: ${(err as Error).message}`);
      continue;
    }
    if (store.runs.findByKey(manifest.robot_id, manifest.run_id)) {
      outcome.skipped++;
      continue;
    }
    const packed = ARCHIVE.test(path) ? null : await packDirectory(path);
    try {
      const res = await app.inject({
        method: 'POST',
        url: '/api/v1/runs',
        headers: { authorization: `Bearer ${tokenFor(manifest.robot_id)}`, 'content-type': 'application/gzip' },
        payload: createReadStream(packed?.path ?? path),
      });
      const body = res.json() as { run?: { id: string }; detail?: string };
      if (res.statusCode >= 300 || !body.run) {
        outcome.refused.push({ path, reason: body.detail ?? `HTTP ${res.statusCode}` });
        log(`seed ${manifest.robot_id}/${manifest.run_id}: refused (${body.detail ?? res.statusCode})`);
      } else {
        outcome.loaded.push({ runId: manifest.run_id, id: body.run.id });
        log(`seed ${manifest.robot_id}/${manifest.run_id}: uploaded as run ${body.run.id}`);
      }
    } finally {
      await packed?.cleanup();
    }
  }
  return outcome;
}
