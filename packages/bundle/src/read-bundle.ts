import { stat } from 'node:fs/promises';
import { join } from 'node:path';
import type { RunManifest } from '@plumbline/contracts';
import { openBundle, type BundleKind } from './archive.ts';
import type { ArchiveLimits } from './archive-extractor.ts';
import type { GnssColumns, ImuColumns, LoopColumns, OdometryColumns } from './columns.ts';
import type { ReadStats } from './csv-reader.ts';
import { readGnssCsv, readImuCsv, readLoopsCsv, readOdometryCsv, type CsvReadOptions } from './csv-tables.ts';
import { readManifest } from './manifest.ts';
import { readGnssNmea } from './nmea-reader.ts';

export interface ReadBundleOptions {
  limits?: ArchiveLimits;
  /** Reject a file when bad lines exceed this fraction of its data lines. Default 0.01. */
  maxBadFraction?: number;
  maxLineBytes?: number;
  /**
   * Put the IMU and odometry columns on SharedArrayBuffer (see CsvOptions.sharedMemory): for an analysis that hands
   * them to a worker thread.
   */
  sharedMemory?: boolean;
}

export interface Bundle {
  kind: BundleKind;
  manifest: RunManifest;
  imu: ImuColumns;
  odometry: OdometryColumns;
  gnss: GnssColumns | null;
  loops: LoopColumns | null;
  stats: { imu: ReadStats; odometry: ReadStats; gnss: ReadStats | null; loops: ReadStats | null };
}

/** Rough bytes per CSV row, to size the column stores once (gzip files are assumed ~5:1). */
async function rowsHint(path: string, bytesPerRow: number): Promise<number> {
  const size = (await stat(path)).size * (path.endsWith('.gz') ? 5 : 1);
  return Math.min(Math.ceil(size / bytesPerRow) + 16, 1 << 26);
}

/**
 * Reads a whole bundle (directory, .tar, .tar.gz/.tgz or .zip): manifest, odometry, IMU and the optional GNSS and
 * loop files, as columns. The temporary extraction directory is removed before returning. Every failure is a
 * BundleError naming the file, line and column.
 */
export async function readBundle(path: string, options: ReadBundleOptions = {}): Promise<Bundle> {
  const opened = await openBundle(path, options.limits);
  try {
    const manifest = await readManifest(opened.root);
    const at = (file: string) => join(opened.root, file);
    const base: CsvReadOptions = {
      maxBadFraction: options.maxBadFraction,
      maxLineBytes: options.maxLineBytes,
      maxBytes: options.limits?.maxTotalBytes,
      maxRatio: options.limits?.maxRatio,
      ratioFloorBytes: options.limits?.ratioFloorBytes,
    };
    const csv = async (file: string, bytesPerRow: number): Promise<CsvReadOptions> => ({
      ...base, file, rowsHint: await rowsHint(at(file), bytesPerRow),
    });
    const shared = { sharedMemory: options.sharedMemory ?? false };
    const odometry = await readOdometryCsv(at(manifest.odometry.file), { ...(await csv(manifest.odometry.file, 96)), ...shared });
    let gnss = null;
    if (manifest.gnss) {
      const file = manifest.gnss.file;
      gnss = /\.nmea(\.gz)?$/i.test(file) ? await readGnssNmea(at(file), { ...base, file }) : await readGnssCsv(at(file), await csv(file, 64));
    }
    const loops = manifest.loops ? await readLoopsCsv(at(manifest.loops.file), await csv(manifest.loops.file, 96)) : null;
    const imu = await readImuCsv(at(manifest.imu.file), { ...(await csv(manifest.imu.file, 72)), ...shared });
    return {
      kind: opened.kind,
      manifest,
      imu: imu.columns,
      odometry: odometry.columns,
      gnss: gnss?.columns ?? null,
      loops: loops?.columns ?? null,
      stats: { imu: imu.stats, odometry: odometry.stats, gnss: gnss?.stats ?? null, loops: loops?.stats ?? null },
    };
  } finally {
    await opened.cleanup();
  }
}

export interface BundleSummary {
  kind: BundleKind;
  manifest: RunManifest;
  /** Entry names of an archive (empty for a directory). */
  entries: string[];
}

/**
 * Cheap check at upload time: walks the archive under every limit, writes only run.json, validates it and checks
 * that the files it names are present. Data files are not parsed (readBundle does that).
 */
export async function inspectBundle(path: string, options: Pick<ReadBundleOptions, 'limits'> = {}): Promise<BundleSummary> {
  const opened = await openBundle(path, options.limits, 'manifest-only');
  try {
    const manifest = await readManifest(opened.root);
    return { kind: opened.kind, manifest, entries: opened.entries };
  } finally {
    await opened.cleanup();
  }
}
