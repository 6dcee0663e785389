import { createReadStream } from 'node:fs';
import { mkdtemp, open, readdir, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import { Transform, type TransformCallback } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { createGunzip } from 'node:zlib';
import { extract as tarExtract } from 'tar-stream';
import { Extractor, resolveLimits, type ArchiveLimits, type ResolvedLimits } from './archive-extractor.ts';
import { extractZip } from './archive-zip.ts';
import { BundleError, isSystemError } from './errors.ts';

export type BundleKind = 'directory' | 'tar' | 'tar.gz' | 'zip';

/**
 * `all` writes every file; `manifest-only` writes run.json and leaves the other files as empty placeholders after
 * checking them against every limit (tar data is still streamed through; zip data is judged by its headers alone).
 */
export type ExtractMode = 'all' | 'manifest-only';

export const isManifestEntry = (name: string): boolean => /^([^/]+\/)?run\.json$/.test(name);

export interface OpenedBundle {
  /** Directory holding run.json and the data files. */
  root: string;
  kind: BundleKind;
  /** Entry names as extracted (archives only). */
  entries: string[];
  /** Removes the temporary extraction directory (no-op for a directory bundle). Safe to call twice. */
  cleanup(): Promise<void>;
}

/**
 * Opens a bundle: a directory is used in place; a .tar, .tar.gz/.tgz or .zip (recognised by its leading bytes) is
 * extracted into a fresh temporary directory under the limits (see ArchiveLimits). Links, devices, paths leaving
 * the root and duplicate names are rejected with the entry name; nested archives are kept as plain files.
 * When the archive holds a single top-level directory and no run.json at its root, that directory is the root.
 * `mode` 'manifest-only' is the cheap variant for upload-time checks (see ExtractMode).
 */
export async function openBundle(path: string, limits: ArchiveLimits = {}, mode: ExtractMode = 'all'): Promise<OpenedBundle> {
  const info = await stat(path).catch((err: unknown) => {
    throw new BundleError('BUNDLE_NOT_FOUND', `cannot open bundle: ${(err as Error).message}`, { file: path, cause: err });
  });
  if (info.isDirectory()) return { root: path, kind: 'directory', entries: [], cleanup: async () => {} };
  const kind = await sniff(path);
  const resolved = resolveLimits(limits);
  const temp = await mkdtemp(join(resolved.tmpDir ?? tmpdir(), 'plumbline-bundle-'));
  const cleanup = () => rm(temp, { recursive: true, force: true });
  try {
    const extractor = new Extractor(basename(path), temp, resolved, mode === 'all' ? undefined : isManifestEntry);
    if (kind === 'zip') await extractZip(path, extractor);
    else await extractTar(createReadStream(path), kind === 'tar.gz' ? new RatioGuard(extractor.archive, info.size, resolved) : null, extractor);
    return { root: await findRoot(temp), kind, entries: extractor.entryNames, cleanup };
  } catch (err) {
    await cleanup();
    throw err;
  }
}

async function sniff(path: string): Promise<Exclude<BundleKind, 'directory'>> {
  const fh = await open(path, 'r');
  const head = Buffer.alloc(512);
  let got: number;
  try {
    ({ bytesRead: got } = await fh.read(head, 0, 512, 0));
  } finally {
    await fh.close();
  }
  if (got >= 2 && head[0] === 0x1f && head[1] === 0x8b) return 'tar.gz';
  if (got >= 4 && head.readUInt32LE(0) === 0x04034b50) return 'zip';
  if (got >= 4 && head.readUInt32LE(0) === 0x06054b50) return 'zip'; // empty zip
  if (got === 512 && head.toString('latin1', 257, 262) === 'ustar') return 'tar';
  if (/\.tar$/i.test(path) && got === 512) return 'tar'; // pre-POSIX tar without magic
  throw new BundleError('BUNDLE_UNSUPPORTED', 'not a directory, .tar, .tar.gz/.tgz or .zip', { file: basename(path) });
}

export async function findRoot(temp: string): Promise<string> {
  const top = await readdir(temp, { withFileTypes: true });
  if (top.some((d) => d.name === 'run.json')) return temp;
  if (top.length === 1 && top[0]!.isDirectory()) return join(temp, top[0]!.name);
  return temp;
}

/**
 * Counts decompressed bytes and fails as soon as the overall gzip ratio or the size cap is exceeded.
 * `compressedBytes` is the archive size, or an upper bound of it while the archive is still arriving.
 */
export class RatioGuard extends Transform {
  /** Decompressed bytes passed so far. */
  produced = 0;
  constructor(
    private readonly archive: string,
    private readonly compressedBytes: number,
    private readonly limits: ResolvedLimits,
  ) {
    super();
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, cb: TransformCallback): void {
    this.produced += chunk.length;
    const l = this.limits;
    if (this.produced > l.ratioFloorBytes && this.produced > l.maxRatio * this.compressedBytes) {
      return cb(new BundleError('ARCHIVE_RATIO', `gzip stream expands more than ${l.maxRatio}:1 (${this.compressedBytes} compressed bytes)`, { file: this.archive }));
    }
    if (this.produced > l.maxTotalBytes + 1024 * 1024) {
      return cb(new BundleError('ARCHIVE_TOO_LARGE', `uncompressed content exceeds ${l.maxTotalBytes} bytes`, { file: this.archive }));
    }
    cb(null, chunk);
  }
}

const FILE_TYPES = new Set(['file', 'contiguous-file']);
const LINK_TYPES = new Set(['symlink', 'link']);

/** Extracts a tar stream (gzip-compressed when a ratio guard is given) through the extractor. */
export async function extractTar(source: NodeJS.ReadableStream, gz: RatioGuard | null, ex: Extractor): Promise<void> {
  const extract = tarExtract();
  // 256 KiB output chunks instead of 16 KiB: a sixteenth of the callbacks and buffers for the same bytes
  const stages: NodeJS.ReadWriteStream[] = gz ? [createGunzip({ chunkSize: 256 * 1024 }), gz] : [];
  let feedError: unknown = null;
  const chain = [source, ...stages, extract] as unknown as ReadonlyArray<NodeJS.ReadableStream | NodeJS.WritableStream>;
  const feeding = pipeline(chain).catch((err: unknown) => {
    feedError = err;
  });
  try {
    for await (const entry of extract) {
      const h = entry.header;
      const name = ex.admit(h.name, h.size ?? 0);
      const type = h.type ?? 'file';
      if (LINK_TYPES.has(type)) {
        throw new BundleError('ARCHIVE_LINK', `entry "${h.name}" is a ${type === 'link' ? 'hard link' : 'symbolic link'} (to "${h.linkname ?? ''}"); links are not allowed`, { file: ex.archive });
      }
      if (type === 'directory') {
        if (name !== null) await ex.directory(name);
        entry.resume();
      } else if (FILE_TYPES.has(type) && name !== null) {
        await ex.file(name, entry as unknown as AsyncIterable<Uint8Array>, h.size ?? 0);
      } else {
        throw new BundleError('ARCHIVE_ENTRY_TYPE', `entry "${h.name}" has type ${type}; only files and directories are allowed`, { file: ex.archive });
      }
    }
  } catch (err) {
    extract.destroy();
    await feeding;
    throw preferred(feedError, err, ex.archive);
  }
  await feeding;
  if (feedError !== null) throw preferred(feedError, feedError, ex.archive);
}

/**
 * Picks the error to report: a limit error raised while feeding wins over the follow-on error seen by the reader;
 * a system error (ENOSPC, EACCES, …) is the server's problem, not the bundle's, and is rethrown as it is;
 * anything else from tar-stream or zlib means the archive is damaged.
 */
function preferred(feedError: unknown, err: unknown, archive: string): unknown {
  for (const e of [feedError, err]) if (e instanceof BundleError) return e;
  for (const e of [err, feedError]) if (isSystemError(e)) return e;
  const e = (feedError ?? err) as Error;
  return new BundleError('ARCHIVE_CORRUPT', `archive is corrupt or truncated: ${e.message}`, { file: archive, cause: e });
}
