import { lstat, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { RunManifest } from '@plumbline/contracts';
import { BundleError, type BundleIssue } from './errors.ts';
import { locateJsonPath, locateJsonSyntaxError, positionOf } from './json-locate.ts';
import { firstInvalidUtf8 } from './utf8.ts';

export const MANIFEST_FILE = 'run.json';
export const MAX_MANIFEST_BYTES = 1024 * 1024;

const CSV_NAME = /\.csv(\.gz)?$/i;
const GNSS_NAME = /\.(csv|nmea)(\.gz)?$/i;

/**
 * Parses and validates manifest bytes. JSON syntax errors name the line and column; schema violations name the
 * JSON path, the message and where the offending value (or the object missing a property) sits in the text.
 */
export function parseManifest(bytes: Uint8Array, file = MANIFEST_FILE): RunManifest {
  const bad = firstInvalidUtf8(bytes, 0, bytes.length);
  if (bad >= 0) {
    const pos = positionOf(Buffer.from(bytes.subarray(0, bad)).toString('utf8'), bad);
    throw new BundleError('NOT_UTF8', 'manifest is not valid UTF-8', { file, line: pos.line, column: pos.column });
  }
  let text = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString('utf8');
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    const p = locateJsonSyntaxError(text);
    throw new BundleError('MANIFEST_SYNTAX', `invalid JSON: ${p?.message ?? (err as Error).message}`, {
      file, line: p?.line ?? null, column: p?.column ?? null, cause: err,
    });
  }
  const parsed = RunManifest.safeParse(json);
  if (!parsed.success) {
    const issues: BundleIssue[] = [];
    const paths: string[] = [];
    for (const issue of parsed.error.issues) {
      const keys = issue.path.filter((k): k is string | number => typeof k !== 'symbol');
      const at = locateJsonPath(text, keys);
      paths.push(keys.length === 0 ? '(root)' : keys.join('.'));
      issues.push({ line: at?.line ?? 1, column: at?.column ?? 1, message: `${paths.at(-1)}: ${issue.message}` });
    }
    const first = issues[0]!;
    const more = issues.length > 1 ? ` (and ${issues.length - 1} more)` : '';
    throw new BundleError('MANIFEST_INVALID', `${first.message}${more}`, { file, line: first.line, column: first.column, issues, paths });
  }
  checkFileNames(parsed.data, text, file);
  return parsed.data;
}

function checkFileNames(m: RunManifest, text: string, file: string): void {
  const named: [string[], string, RegExp, string][] = [
    [['odometry', 'file'], m.odometry.file, CSV_NAME, '.csv or .csv.gz'],
    [['imu', 'file'], m.imu.file, CSV_NAME, '.csv or .csv.gz'],
  ];
  if (m.gnss) named.push([['gnss', 'file'], m.gnss.file, GNSS_NAME, '.csv, .nmea, .csv.gz or .nmea.gz']);
  if (m.loops) named.push([['loops', 'file'], m.loops.file, CSV_NAME, '.csv or .csv.gz']);
  for (const [path, name, re, expected] of named) {
    if (re.test(name)) continue;
    const at = locateJsonPath(text, path);
    const message = `${path.join('.')}: "${name}" must end in ${expected}`;
    throw new BundleError('MANIFEST_INVALID', message, {
      file, line: at?.line ?? null, column: at?.column ?? null, issues: [{ line: at?.line ?? 1, column: at?.column ?? 1, message }], paths: [path.join('.')],
    });
  }
}

/** The data files a manifest names, in reading order. */
export function manifestFiles(m: RunManifest): string[] {
  return [m.odometry.file, m.imu.file, ...(m.gnss ? [m.gnss.file] : []), ...(m.loops ? [m.loops.file] : [])];
}

/** Reads `run.json` from a bundle root, validates it and checks that every file it names is a regular file there. */
export async function readManifest(root: string): Promise<RunManifest> {
  await requireRegularFile(root, MANIFEST_FILE, 'the bundle has no run.json at its root');
  const info = await lstat(join(root, MANIFEST_FILE));
  if (info.size > MAX_MANIFEST_BYTES) {
    throw new BundleError('MANIFEST_INVALID', `larger than ${MAX_MANIFEST_BYTES} bytes`, { file: MANIFEST_FILE });
  }
  const manifest = parseManifest(await readFile(join(root, MANIFEST_FILE)));
  for (const name of manifestFiles(manifest)) {
    await requireRegularFile(root, name, `${MANIFEST_FILE} names ${name}, which is not in the bundle`);
  }
  return manifest;
}

async function requireRegularFile(root: string, name: string, missing: string): Promise<void> {
  const info = await lstat(join(root, name)).catch(() => null);
  if (info === null) throw new BundleError('FILE_MISSING', missing, { file: name });
  if (!info.isFile()) {
    throw new BundleError('FILE_MISSING', 'is not a regular file (links and directories are not followed)', { file: name });
  }
}
