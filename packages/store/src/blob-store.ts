import { createHash, randomBytes } from 'node:crypto';
import { createReadStream, existsSync } from 'node:fs';
import { mkdir, open, readdir, rename, stat, unlink, type FileHandle } from 'node:fs/promises';
import { join } from 'node:path';
import type { Readable } from 'node:stream';
import { BlobChecksumError, BlobOffsetError, BlobTooLargeError, NotFoundError } from './errors.ts';
import type { BlobInfo, BlobStore } from './types.ts';

const SHA256_HEX = /^[0-9a-f]{64}$/;

function checkSha(sha256: string): string {
  if (!SHA256_HEX.test(sha256)) throw new RangeError(`not a lowercase hex SHA-256: ${sha256}`);
  return sha256;
}

/** fsync of a directory, so a rename into it survives a power cut (POSIX; not supported on some platforms). */
async function fsyncDir(dir: string): Promise<void> {
  let handle: FileHandle | undefined;
  try {
    handle = await open(dir, 'r');
    await handle.sync();
  } catch (err) {
    // Windows cannot open directories; EISDIR/EPERM there is not a durability bug we can fix.
    const code = (err as NodeJS.ErrnoException).code;
    if (code !== 'EISDIR' && code !== 'EPERM' && code !== 'EINVAL') throw err;
  } finally {
    await handle?.close();
  }
}

async function* chunksOf(source: Readable | AsyncIterable<Uint8Array> | Uint8Array): AsyncIterable<Uint8Array> {
  if (source instanceof Uint8Array) yield source;
  // A request body left part-read must not be destroyed: that would reset the connection before the HTTP layer
  // can answer (413 for a body past the limit). It is left paused; the server closes the connection after answering.
  else if (typeof (source as Readable).iterator === 'function') yield* (source as Readable).iterator({ destroyOnReturn: false }) as AsyncIterable<Uint8Array>;
  else yield* source as AsyncIterable<Uint8Array>;
}

/** Request chunks are gathered into writes of about this size: one system call per MiB instead of per 64 kB. */
const WRITE_BATCH_BYTES = 1 << 20;
/** At most this many chunks per write (the usual IOV_MAX), should a source yield tiny chunks. */
const WRITE_BATCH_CHUNKS = 1024;
/**
 * While a large body arrives its bytes are flushed to disk (fdatasync) every this many bytes, in the background,
 * so the fsync before answering has only the tail left to write (about 60 ms less for 128 MB on a warm disk). It
 * is no substitute for that fsync, which still covers the whole file.
 */
const SYNC_EVERY_BYTES = 16 << 20;

/** Writes `chunks` (in order) at `position`, resuming after a short write. */
async function writeAll(file: FileHandle, chunks: Uint8Array[], position: number): Promise<void> {
  let at = position;
  let rest = chunks;
  while (rest.length > 0) {
    const { bytesWritten } = await file.writev(rest, at);
    at += bytesWritten;
    let skip = bytesWritten;
    let i = 0;
    while (i < rest.length && skip >= rest[i]!.byteLength) skip -= rest[i++]!.byteLength;
    rest = rest.slice(i);
    if (skip > 0) rest[0] = rest[0]!.subarray(skip);
  }
}

/**
 * Streams `source` into an open file from `position`, hashing as it goes; stops with BlobTooLargeError past `limit`.
 * Chunks are gathered into batches of WRITE_BATCH_BYTES and written with one write in flight while the next batch
 * arrives, so receiving, hashing and the write overlap. Chunks are held until written: the source must not reuse a
 * chunk's memory after yielding it (Node streams never do). Resolves or rejects only once no write is in flight,
 * so a caller may cut back or remove the file at once.
 */
async function pump(
  source: Readable | AsyncIterable<Uint8Array> | Uint8Array,
  file: FileHandle,
  position: number,
  limit: number,
  hash: ReturnType<typeof createHash> | null,
): Promise<number> {
  let received = position;
  let batch: Uint8Array[] = [];
  let batchBytes = 0;
  let batchAt = position;
  let inFlight: Promise<void> | null = null;
  let syncing: Promise<void> | null = null;
  let syncedAt = position;
  const flush = async (): Promise<void> => {
    if (inFlight) await inFlight;
    if (!syncing && batchAt - syncedAt >= SYNC_EVERY_BYTES) {
      syncedAt = batchAt;
      syncing = file.datasync().then(() => void (syncing = null));
      // awaited before pump settles, like the write
      syncing.catch(() => undefined);
    }
    const chunks = batch;
    const at = batchAt;
    batch = [];
    batchAt += batchBytes;
    batchBytes = 0;
    inFlight = writeAll(file, chunks, at);
    // awaited before pump settles; marked handled so a failure seen first by the source loop is not unhandled
    inFlight.catch(() => undefined);
  };
  try {
    for await (const chunk of chunksOf(source)) {
      const bytes = typeof chunk === 'string' ? Buffer.from(chunk) : chunk;
      if (received + bytes.byteLength > limit) {
        throw new BlobTooLargeError(limit);
      }
      hash?.update(bytes);
      received += bytes.byteLength;
      batch.push(bytes);
      batchBytes += bytes.byteLength;
      if (batchBytes >= WRITE_BATCH_BYTES || batch.length >= WRITE_BATCH_CHUNKS) await flush();
    }
    if (batchBytes > 0) await flush();
    await inFlight;
    await syncing;
  } catch (err) {
    await (inFlight as Promise<void> | null)?.catch(() => undefined);
    await (syncing as Promise<void> | null)?.catch(() => undefined);
    throw err;
  }
  return received;
}

async function hashFile(path: string): Promise<{ sha256: string; sizeBytes: number }> {
  const hash = createHash('sha256');
  let size = 0;
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) {
    hash.update(chunk as Buffer);
    size += (chunk as Buffer).byteLength;
  }
  return { sha256: hash.digest('hex'), sizeBytes: size };
}


/** Writes `source` at `offset` of a session temp file (which must hold exactly `offset` bytes) and fsyncs. */
async function appendAt(
  tempPath: string,
  offset: number,
  source: Readable | AsyncIterable<Uint8Array> | Uint8Array,
  maxBytes: number,
): Promise<number> {
  const file = await open(tempPath, 'r+');
  try {
    const { size } = await file.stat();
    if (size !== offset) throw new BlobOffsetError(size, offset);
    try {
      const end = await pump(source, file, offset, maxBytes, null);
      await file.sync();
      return end;
    } catch (err) {
      // keep the file consistent with the last acknowledged offset so the client can resume from it
      await file.truncate(offset);
      await file.sync();
      throw err;
    }
  } finally {
    await file.close();
  }
}

/**
 * Content-addressed bundle files under `dir`: `<dir>/sha256/ab/cdef…` (the first two hex digits fan out the
 * directory), temp files in `<dir>/tmp/`. A blob becomes visible under its final name only after it was fully
 * written, fsynced and renamed (rename is atomic within one file system), and the directory entry is fsynced.
 */
export function createBlobStore(dir: string): BlobStore {
  const tmpDir = join(dir, 'tmp');
  const appending = new Map<string, Promise<void>>();
  const pathOf = (sha256: string): string => join(dir, 'sha256', checkSha(sha256).slice(0, 2), sha256.slice(2));
  const newTempPath = (label = 'blob'): string =>
    join(tmpDir, `${label.replace(/[^A-Za-z0-9_-]/g, '_').slice(0, 64)}-${Date.now()}-${randomBytes(6).toString('hex')}.part`);

  async function removeTemp(path: string): Promise<void> {
    await unlink(path).catch((err: NodeJS.ErrnoException) => {
      if (err.code !== 'ENOENT') throw err;
    });
  }

  /**
   * fsynced temp file -> final name. An existing blob with the same digest has the same bytes, so it is kept and
   * the temp file is dropped without waiting: freeing a large file's blocks takes tens of milliseconds (more where
   * the file system discards freed blocks), and a copy left behind by a crash is removed by `sweep`. The directory
   * is fsynced either way, since the existing entry may come from a rename whose own fsync is still running.
   */
  async function install(tempPath: string, sha256: string, sizeBytes: number): Promise<BlobInfo> {
    const final = pathOf(sha256);
    const shard = join(dir, 'sha256', sha256.slice(0, 2));
    await mkdir(shard, { recursive: true });
    if (existsSync(final)) void removeTemp(tempPath).catch(() => undefined);
    else await rename(tempPath, final);
    await fsyncDir(shard);
    return { sha256, sizeBytes, path: final };
  }

  return {
    dir,
    pathOf,
    async writeStream(source, opts) {
      await mkdir(tmpDir, { recursive: true });
      const temp = newTempPath();
      const file = await open(temp, 'wx');
      const hash = createHash('sha256');
      try {
        const size = await pump(source, file, 0, opts.maxBytes, hash);
        await file.sync();
        await file.close();
        const sha256 = hash.digest('hex');
        if (opts.expectedSha256 !== undefined && opts.expectedSha256 !== sha256) throw new BlobChecksumError(opts.expectedSha256, sha256);
        return await install(temp, sha256, size);
      } catch (err) {
        await file.close().catch(() => undefined);
        await removeTemp(temp);
        throw err;
      }
    },
    async createTemp(label) {
      await mkdir(tmpDir, { recursive: true });
      const temp = newTempPath(label);
      await (await open(temp, 'wx')).close();
      return temp;
    },
    async appendChunk(tempPath, offset, source, opts) {
      // one writer per session file at a time in this process: a racing second request waits, then finds the
      // file grown and fails with BlobOffsetError instead of interleaving its bytes
      const previous = appending.get(tempPath) ?? Promise.resolve();
      let release!: () => void;
      const mine = new Promise<void>((r) => (release = r));
      const chained = previous.then(() => mine);
      appending.set(tempPath, chained);
      await previous;
      try {
        return await appendAt(tempPath, offset, source, opts.maxBytes);
      } finally {
        release();
        if (appending.get(tempPath) === chained) appending.delete(tempPath);
      }
    },
    async promote(tempPath, expectedSha256) {
      checkSha(expectedSha256);
      const { sha256, sizeBytes } = await hashFile(tempPath);
      if (sha256 !== expectedSha256) throw new BlobChecksumError(expectedSha256, sha256);
      const file = await open(tempPath, 'r+');
      try {
        await file.sync();
      } finally {
        await file.close();
      }
      return install(tempPath, sha256, sizeBytes);
    },
    async has(sha256) {
      try {
        return (await stat(pathOf(sha256))).isFile();
      } catch {
        return false;
      }
    },
    open(sha256) {
      const path = pathOf(sha256);
      if (!existsSync(path)) throw new NotFoundError('blob', sha256);
      return createReadStream(path);
    },
    async remove(sha256, guard) {
      checkSha(sha256);
      if (guard.isReferenced(sha256)) return { removed: false, reason: 'referenced' };
      // Moved aside first and the guard asked again, so an upload of the same content that created its run in
      // between keeps its blob (it is moved back unless that upload already installed the same bytes again).
      await mkdir(tmpDir, { recursive: true });
      const aside = newTempPath('removing');
      try {
        await rename(pathOf(sha256), aside);
      } catch (err) {
        if ((err as NodeJS.ErrnoException).code === 'ENOENT') return { removed: false, reason: 'absent' };
        throw err;
      }
      if (guard.isReferenced(sha256)) {
        if (existsSync(pathOf(sha256))) await removeTemp(aside);
        else await rename(aside, pathOf(sha256));
        return { removed: false, reason: 'referenced' };
      }
      await removeTemp(aside);
      return { removed: true };
    },
    removeTemp,
    async sweep(olderThanMs, now = new Date()) {
      let names: string[];
      try {
        names = await readdir(tmpDir);
      } catch {
        return 0;
      }
      let removed = 0;
      for (const name of names) {
        const path = join(tmpDir, name);
        const info = await stat(path).catch(() => null);
        if (info?.isFile() && now.getTime() - info.mtimeMs > olderThanMs) {
          await removeTemp(path);
          removed += 1;
        }
      }
      return removed;
    },
  };
}
