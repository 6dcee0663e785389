/**
 * The Shift workload: an 8-hour ground run of one robot (200 Hz IMU, 20 Hz odometry, 5 Hz GNSS as NMEA 0183,
 * loop candidates, back at the dock at the end), written by the simulator's streaming writer as a .tar.gz and cached
 * in bench/out/ under a hash of its spec, so a rerun with the same spec reuses the file.
 */
import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { mkdir, readFile, rename, rm, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { makeRunSpec, writeLongRun, type RunSpec } from '@plumbline/simulator';

export interface ShiftWorkload {
  path: string;
  bytes: number;
  spec: RunSpec;
  specHash: string;
  /** seconds spent generating it now; null when the cached file was reused */
  generatedS: number | null;
  /** seconds the generation took when the cached file was made (build.json beside it) */
  firstGeneratedS: number | null;
}

/** The Shift spec for a duration (8 h by default; the smoke mode uses minutes). */
export function shiftSpec(durationS = 8 * 3600): RunSpec {
  return makeRunSpec({
    seed: 8_08,
    robotId: 'kestrel-02',
    runId: `shift-${durationS}s`,
    site: 'harbourside-depot',
    startedAt: '2026-03-02T06:00:00Z',
    durationS,
    gnssRateHz: 5,
    gnssFormat: 'nmea',
    loops: true,
  });
}

/** Raised when the simulator's output for an unchanged spec changes, so cached workloads are regenerated. */
const GENERATOR_REVISION = 2;

export function specHash(spec: RunSpec): string {
  return createHash('sha256').update(JSON.stringify({ spec, generator: GENERATOR_REVISION })).digest('hex').slice(0, 16);
}

/** Returns the cached Shift archive for the spec, generating it first when missing. */
export async function ensureShift(outRoot: string, spec: RunSpec = shiftSpec()): Promise<ShiftWorkload> {
  const hash = specHash(spec);
  const dir = join(outRoot, `shift-${hash}`);
  const path = join(dir, 'bundle.tar.gz');
  let generatedS: number | null = null;
  if (!existsSync(path)) {
    const tmp = `${dir}.tmp-${process.pid}`;
    await rm(tmp, { recursive: true, force: true });
    await mkdir(tmp, { recursive: true });
    const t0 = performance.now();
    await writeLongRun(spec, tmp, { archive: 'tar.gz', nmea: true });
    generatedS = (performance.now() - t0) / 1000;
    await writeFile(join(tmp, 'build.json'), `${JSON.stringify({ generatedS })}\n`);
    await rm(dir, { recursive: true, force: true });
    await rename(tmp, dir);
  }
  const build = existsSync(join(dir, 'build.json')) ? (JSON.parse(await readFile(join(dir, 'build.json'), 'utf8')) as { generatedS: number }) : null;
  return { path, bytes: (await stat(path)).size, spec, specHash: hash, generatedS, firstGeneratedS: build?.generatedS ?? null };
}
