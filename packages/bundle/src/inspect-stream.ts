import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough, pipeline, type DuplexOptions, type Writable } from 'node:stream';
import { createGunzip, type ZlibOptions } from 'node:zlib';
import { extractTar, findRoot, isManifestEntry, RatioGuard } from './archive.ts';
import { Extractor, resolveLimits, type ArchiveLimits, type ResolvedLimits } from './archive-extractor.ts';
import { BundleError } from './errors.ts';
import { readManifest } from './manifest.ts';
import type { BundleSummary } from './read-bundle.ts';

/** Feeds an archive that is still arriving to the upload-time check (see createUploadInspector). */
export interface UploadInspector {
  /** Gives the next bytes; resolves when the inspector can take more (back-pressure). Never rejects. */
  write(chunk: Uint8Array): Promise<void>;
  /**
   * All bytes were given (`totalBytes` of them). Resolves to the same summary as `inspectBundle` on the stored
   * file, or null when the archive cannot be checked as a stream (zip needs its central directory, a tar without
   * the POSIX magic needs its file name): the caller then inspects the stored file. Rejects with the BundleError
   * `inspectBundle` would give.
   */
  end(totalBytes: number): Promise<BundleSummary | null>;
  /** The upload failed: stops and removes the temporary files. */
  abort(): Promise<void>;
}

export interface UploadInspectorOptions {
  /** The name errors give as `file`. */
  name: string;
  limits?: ArchiveLimits;
  /** Most bytes the upload may have (its declared length or the upload cap): bounds the gzip ratio while streaming. */
  maxCompressedBytes: number;
}

type Kind = 'tar' | 'tar.gz';

/**
 * Request chunks (64 kB) are handed to the check in pieces of about this size: the inflate then runs on the zlib
 * thread pool one MiB per job instead of one request chunk per job, so it waits less on the receiving thread to
 * hand out the next job. The copy this takes is a small part of the inflate's cost; a whole upload of 128 MB
 * measured a few per cent less CPU with it than without.
 */
const FEED_BYTES = 1 << 20;
/** Bytes waiting for the check before the upload is held back (back-pressure). */
const QUEUE_BYTES = 4 << 20;

function sniffHead(head: Buffer): Kind | null {
  if (head.length >= 2 && head[0] === 0x1f && head[1] === 0x8b) return 'tar.gz';
  if (head.length >= 512 && head.toString('latin1', 257, 262) === 'ustar') return 'tar';
  return null;
}

/**
 * The upload-time bundle check (`inspectBundle`: every archive limit, only run.json written, manifest validated)
 * run on the bytes while they arrive, so no second pass over the stored file is needed. The gzip ratio is bounded
 * while streaming by `maxCompressedBytes` and checked exactly against the final size at the end; since the
 * decompressed count only grows, "over the ratio at some point" equals "over it at the end", and an error found
 * further on in a stream already over the ratio is reported as the ratio error, as the file-based check would.
 */
export function createUploadInspector(options: UploadInspectorOptions): UploadInspector {
  const limits = resolveLimits(options.limits);
  let head: Buffer | null = Buffer.alloc(0);
  let kind: Kind | null = null;
  let passive = false;
  let temp: string | null = null;
  /** Where the bytes go: the gunzip of a .tar.gz, a pass-through for a .tar. */
  let sink: Writable | null = null;
  let running: Promise<{ ex: Extractor | null; guard: RatioGuard | null; error: unknown }> | null = null;
  let failed = false;
  let gathered: Uint8Array[] = [];
  let gatheredBytes = 0;

  const start = (k: Kind): void => {
    kind = k;
    let source: NodeJS.ReadableStream;
    let guard: RatioGuard | null = null;
    if (k === 'tar.gz') {
      guard = new RatioGuard(options.name, options.maxCompressedBytes, limits);
      // zlib streams take the stream options as well (not declared in @types/node)
      const gunzipOptions: ZlibOptions & Pick<DuplexOptions, 'writableHighWaterMark'> = { chunkSize: FEED_BYTES, writableHighWaterMark: QUEUE_BYTES };
      const gunzip = createGunzip(gunzipOptions);
      // a gunzip failure destroys the guard with its error, which the extraction reads like its own stage's
      pipeline(gunzip, guard, () => undefined);
      sink = gunzip;
      source = guard;
    } else {
      const pass = new PassThrough({ highWaterMark: QUEUE_BYTES });
      sink = pass;
      source = pass;
    }
    const feed = sink;
    running = (async () => {
      let ex: Extractor | null = null;
      try {
        temp = await mkdtemp(join(limits.tmpDir ?? tmpdir(), 'plumbline-upload-'));
        ex = new Extractor(options.name, temp, limits, isManifestEntry);
        await extractTar(source, null, ex);
        return { ex, guard, error: null };
      } catch (error) {
        // stop reading; `push` then drops the rest so the upload itself is not held up
        failed = true;
        feed.destroy();
        return { ex, guard, error };
      }
    })();
  };

  const push = async (chunk: Uint8Array): Promise<void> => {
    // a failed extraction destroys the sink (its 'close' has then been emitted already): drop the bytes
    const feed = sink as Writable;
    if (failed || feed.destroyed) return;
    if (feed.write(chunk)) return;
    await new Promise<void>((resolve) => {
      const done = () => {
        feed.off('drain', done);
        feed.off('close', done);
        resolve();
      };
      feed.on('drain', done);
      feed.on('close', done);
    });
  };

  const pushGathered = (): Promise<void> => {
    if (gatheredBytes === 0) return Promise.resolve();
    const piece = gathered.length === 1 ? gathered[0]! : Buffer.concat(gathered, gatheredBytes);
    gathered = [];
    gatheredBytes = 0;
    return push(piece);
  };

  return {
    async write(chunk) {
      if (passive) return;
      if (head !== null) {
        head = Buffer.concat([head, chunk]);
        // wait for the two bytes of the gzip magic, or the 512-byte tar header
        if (head.length < 2 || (head.length < 512 && !(head[0] === 0x1f && head[1] === 0x8b))) return;
        const k = sniffHead(head);
        const first = head;
        head = null;
        if (k === null) {
          passive = true;
          return;
        }
        start(k);
        return push(first);
      }
      gathered.push(chunk);
      gatheredBytes += chunk.byteLength;
      if (gatheredBytes >= FEED_BYTES) return pushGathered();
    },
    async end(totalBytes) {
      if (head !== null) {
        const k = passive ? null : sniffHead(head);
        if (k === null) return null;
        start(k);
        await push(head);
        head = null;
      }
      if (passive || !running) return null;
      await pushGathered();
      (sink as Writable).end();
      const { ex, guard, error } = await running;
      try {
        const ratio = guard ? ratioError(options.name, guard.produced, totalBytes, limits) : null;
        if (ratio) throw ratio;
        if (error !== null || ex === null) throw error;
        const manifest = await readManifest(await findRoot(temp as string));
        return { kind: kind as Kind, manifest, entries: ex.entryNames };
      } finally {
        if (temp) await rm(temp, { recursive: true, force: true });
      }
    },
    async abort() {
      failed = true;
      gathered = [];
      sink?.destroy();
      if (running) await running.catch(() => undefined);
      if (temp) await rm(temp, { recursive: true, force: true });
    },
  };
}

function ratioError(archive: string, produced: number, compressedBytes: number, l: ResolvedLimits): BundleError | null {
  if (produced > l.ratioFloorBytes && produced > l.maxRatio * compressedBytes) {
    return new BundleError('ARCHIVE_RATIO', `gzip stream expands more than ${l.maxRatio}:1 (${compressedBytes} compressed bytes)`, { file: archive });
  }
  return null;
}
