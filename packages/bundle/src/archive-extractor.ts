import { createWriteStream } from 'node:fs';
import { mkdir, writeFile } from 'node:fs/promises';
import { pipeline } from 'node:stream/promises';
import { dirname, join } from 'node:path';
import { BundleError } from './errors.ts';

export interface ArchiveLimits {
  /** Most entries (files and directories) an archive may hold. Default 64. */
  maxEntries?: number;
  /** Cap on the sum of uncompressed entry sizes, bytes. Default 4 GiB. */
  maxTotalBytes?: number;
  /** Cap on uncompressed/compressed size: per entry for zip, for the whole stream for gzip. Default 200. */
  maxRatio?: number;
  /** The ratio cap applies once this many bytes have been produced (tiny files compress freely). Default 1 MiB. */
  ratioFloorBytes?: number;
  /** Parent of the temporary extraction directory. Default os.tmpdir(). */
  tmpDir?: string;
}

export type ResolvedLimits = Required<Omit<ArchiveLimits, 'tmpDir'>> & { tmpDir: string | undefined };

export function resolveLimits(l: ArchiveLimits = {}): ResolvedLimits {
  return {
    maxEntries: l.maxEntries ?? 64,
    maxTotalBytes: l.maxTotalBytes ?? 4 * 1024 ** 3,
    maxRatio: l.maxRatio ?? 200,
    ratioFloorBytes: l.ratioFloorBytes ?? 1024 * 1024,
    tmpDir: l.tmpDir,
  };
}

/**
 * Normalises an entry name to a relative POSIX path inside the bundle, or null for the root itself.
 * Absolute paths, drive letters, backslashes, NUL and `..` segments are ARCHIVE_PATH_TRAVERSAL, naming the entry.
 */
export function safeEntryName(archive: string, raw: string): string | null {
  const fail = (why: string) => new BundleError('ARCHIVE_PATH_TRAVERSAL', `entry "${raw}" ${why}`, { file: archive });
  if (raw.includes('\0')) throw fail('contains a NUL byte');
  if (raw.startsWith('/') || /^[A-Za-z]:/.test(raw)) throw fail('is an absolute path');
  if (raw.includes('\\')) throw fail('contains a backslash');
  const parts = raw.split('/').filter((p) => p !== '' && p !== '.');
  if (parts.includes('..')) throw fail('leaves the bundle root ("..")');
  return parts.length === 0 ? null : parts.join('/');
}

/** Writes archive entries below `root`, enforcing entry count, duplicates and total size while streaming. */
export class Extractor {
  private readonly names = new Set<string>();
  private entries = 0;
  private totalBytes = 0;

  /**
   * @param keep which files to write; the others are checked and counted like the rest but left as empty
   *   placeholders (enough for an upload-time check of the manifest and of which files exist).
   */
  constructor(
    readonly archive: string,
    readonly root: string,
    readonly limits: ResolvedLimits,
    readonly keep: (name: string) => boolean = () => true,
  ) {}

  get entryNames(): string[] {
    return [...this.names];
  }

  /** Registers one entry; returns its normalised name (null for the root directory). */
  admit(raw: string, declaredBytes: number): string | null {
    this.entries++;
    if (this.entries > this.limits.maxEntries) {
      throw new BundleError('ARCHIVE_TOO_MANY_ENTRIES', `more than ${this.limits.maxEntries} entries`, { file: this.archive });
    }
    const name = safeEntryName(this.archive, raw);
    if (name === null) return null;
    if (this.names.has(name)) throw new BundleError('ARCHIVE_DUPLICATE', `entry "${name}" appears twice`, { file: this.archive });
    this.names.add(name);
    if (this.totalBytes + declaredBytes > this.limits.maxTotalBytes) this.tooLarge();
    return name;
  }

  async directory(name: string): Promise<void> {
    await mkdir(join(this.root, name), { recursive: true }).catch((err: unknown) => this.fsError(name, err));
  }

  /**
   * Streams one file entry to disk, counting bytes as they pass: the total-size cap, the size declared in the
   * entry header and, when `compressedBytes` is given (zip), the per-entry ratio cap.
   */
  async file(name: string, data: AsyncIterable<Uint8Array>, declaredBytes: number, compressedBytes?: number): Promise<void> {
    // subscribe before the first await: an entry stream may fail while directories are being created
    const iterator = data[Symbol.asyncIterator]();
    const source: AsyncIterable<Uint8Array> = { [Symbol.asyncIterator]: () => iterator };
    const path = join(this.root, name);
    await mkdir(dirname(path), { recursive: true }).catch((err: unknown) => this.fsError(name, err));
    let written = 0;
    const count = (bytes: number): void => {
      written += bytes;
      this.totalBytes += bytes;
      if (this.totalBytes > this.limits.maxTotalBytes) this.tooLarge();
      if (written > declaredBytes) {
        throw new BundleError('ARCHIVE_CORRUPT', `entry "${name}" is larger than its header says (${declaredBytes} bytes)`, { file: this.archive });
      }
      if (compressedBytes !== undefined && written > this.limits.ratioFloorBytes && written > this.limits.maxRatio * compressedBytes) {
        throw this.ratioError(name, compressedBytes);
      }
    };
    if (!this.keep(name)) {
      for await (const chunk of source) count(chunk.length);
      return this.placeholder(name);
    }
    try {
      await pipeline(
        source,
        async function* (source: AsyncIterable<Uint8Array>) {
          for await (const chunk of source) {
            count(chunk.length);
            yield chunk;
          }
        },
        createWriteStream(path, { flags: 'wx' }),
      );
    } catch (err) {
      if (err instanceof BundleError) throw err;
      this.fsError(name, err);
    }
  }

  /** An empty file standing for an entry that was checked but not written. */
  async placeholder(name: string): Promise<void> {
    const path = join(this.root, name);
    await mkdir(dirname(path), { recursive: true }).catch((err: unknown) => this.fsError(name, err));
    await writeFile(path, '', { flag: 'wx' }).catch((err: unknown) => this.fsError(name, err));
  }

  ratioError(name: string, compressedBytes: number): BundleError {
    return new BundleError(
      'ARCHIVE_RATIO',
      `entry "${name}" expands more than ${this.limits.maxRatio}:1 (${compressedBytes} compressed bytes)`,
      { file: this.archive },
    );
  }

  private tooLarge(): never {
    throw new BundleError('ARCHIVE_TOO_LARGE', `uncompressed content exceeds ${this.limits.maxTotalBytes} bytes`, { file: this.archive });
  }

  private fsError(name: string, err: unknown): never {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'EEXIST' || code === 'ENOTDIR' || code === 'EISDIR') {
      throw new BundleError('ARCHIVE_DUPLICATE', `entry "${name}" collides with another entry`, { file: this.archive, cause: err });
    }
    throw err; // disk full, permissions: a server problem, not the bundle's
  }
}
