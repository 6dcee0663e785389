/**
 * Writes a simulated run as a bundle directory (run.json + CSV/NMEA files) with truth.json BESIDE it:
 *   <outDir>/bundle/run.json, imu.csv[.gz], odometry.csv[.gz], gnss.csv[.gz] | gnss.nmea, loops.csv[.gz]
 *   <outDir>/truth.json
 * With archive 'tar.gz' the bundle directory is packed into <outDir>/bundle.tar.gz (deterministic headers) instead.
 */
import { createReadStream } from 'node:fs';
import { mkdir, readdir, rm, stat, writeFile } from 'node:fs/promises';
import { once } from 'node:events';
import { join } from 'node:path';
import { pipeline } from 'node:stream/promises';
import { createGzip } from 'node:zlib';
import { createWriteStream } from 'node:fs';
import * as tar from 'tar-stream';
import type { SimulatedRun } from '../simulate.ts';
import { defaultFiles } from '../simulate.ts';
import { buildManifest, GEOID_SEPARATION_M } from '../truth.ts';
import { GNSS_HEADER, IMU_HEADER, LOOPS_HEADER, ODOMETRY_HEADER, timeDecimals, writeGnssRows, writeImuRows, writeLoopRows, writeOdometryRows } from './format.ts';
import { writeNmeaRows } from './nmea.ts';
import { openSink } from './sink.ts';

export interface WriteOptions {
  /** compress CSV files (.csv.gz); default true */
  gzip?: boolean;
  /** write GNSS as NMEA 0183 (gnss.nmea) instead of CSV; default: the spec's gnssFormat */
  nmea?: boolean;
  /** pack the bundle into bundle.tar.gz */
  archive?: 'tar.gz';
  /** gzip level 1..9; default 9 */
  level?: number;
}

export interface WrittenRun {
  /** bundle directory or archive path */
  bundlePath: string;
  truthPath: string;
}

/** Stable JSON (2-space indent, trailing newline). */
export function jsonText(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}

export async function writeRun(run: SimulatedRun, outDir: string, options: WriteOptions = {}): Promise<WrittenRun> {
  const gzip = options.gzip ?? true;
  const nmea = options.nmea ?? run.spec.gnssFormat === 'nmea';
  const level = options.level ?? 9;
  const spec = { ...run.spec, gnssFormat: nmea ? ('nmea' as const) : ('csv' as const) };
  const files = defaultFiles({ ...run.scenario, spec }, gzip);
  const dir = join(outDir, 'bundle');
  await rm(dir, { recursive: true, force: true });
  await mkdir(dir, { recursive: true });
  const manifest = buildManifest(run.scenario, files);
  await writeFile(join(dir, 'run.json'), jsonText(manifest));

  let sink = openSink(join(dir, files.imu), gzip, level);
  await sink.write(IMU_HEADER);
  await writeImuRows(sink, run.imu, timeDecimals(spec.imuRateHz), accelDecimals(run));
  await sink.close();

  sink = openSink(join(dir, files.odometry), gzip, level);
  await sink.write(ODOMETRY_HEADER);
  await writeOdometryRows(sink, run.odometry);
  await sink.close();

  if (run.gnss && files.gnss) {
    sink = openSink(join(dir, files.gnss), gzip && !nmea, level);
    if (nmea) await writeNmeaRows(sink, run.gnss, GEOID_SEPARATION_M);
    else {
      await sink.write(GNSS_HEADER);
      await writeGnssRows(sink, run.gnss);
    }
    await sink.close();
  }
  if (run.loops && files.loops) {
    sink = openSink(join(dir, files.loops), gzip, level);
    await sink.write(LOOPS_HEADER);
    await writeLoopRows(sink, run.loops);
    await sink.close();
  }
  const truth = { ...run.truth, gnss: run.truth.gnss ? { ...run.truth.gnss, format: nmea ? 'nmea' : 'csv', geoid_separation_m: nmea ? GEOID_SEPARATION_M : null } : null };
  const truthPath = join(outDir, 'truth.json');
  await writeFile(truthPath, jsonText(truth));
  if (options.archive === 'tar.gz') {
    const archive = join(outDir, 'bundle.tar.gz');
    await packDirectory(dir, archive, Date.parse(run.spec.startedAt) / 1000);
    await rm(dir, { recursive: true, force: true });
    return { bundlePath: archive, truthPath };
  }
  return { bundlePath: dir, truthPath };
}

/** Accelerometer decimals: values written in g need one more digit to keep the quantum. */
export function accelDecimals(run: { spec: { faults: { kind: string; variant?: string }[] } }): number {
  return run.spec.faults.some((f) => f.kind === 'units' && f.variant === 'accel-g') ? 5 : 4;
}

/**
 * Packs the files of a directory (sorted, flat) into a gzip-compressed tar with fixed mtime, mode and owner, so the
 * archive bytes depend on the contents only. Files are streamed, never loaded whole.
 */
export async function packDirectory(dir: string, archivePath: string, mtimeEpochS: number): Promise<void> {
  const names = (await readdir(dir)).sort();
  const pack = tar.pack();
  const out = pipeline(pack, createGzip({ level: 6 }), createWriteStream(archivePath));
  for (const name of names) {
    const size = (await stat(join(dir, name))).size;
    const entry = pack.entry({ name, size, mode: 0o644, mtime: new Date(mtimeEpochS * 1000), uid: 0, gid: 0, uname: '', gname: '', type: 'file' });
    const src = createReadStream(join(dir, name));
    src.pipe(entry);
    await once(entry, 'finish');
  }
  pack.finalize();
  await out;
}
