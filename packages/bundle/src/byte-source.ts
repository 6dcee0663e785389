import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { createGunzip } from 'node:zlib';
import { BundleError } from './errors.ts';

/** A file path (`.gz` is decompressed), or chunks already in memory or from any stream. */
export type ByteSource = string | Iterable<Uint8Array> | AsyncIterable<Uint8Array>;

export interface DecompressLimits {
  /** Cap on decompressed bytes of one `.gz` file. Default 4 GiB. */
  maxBytes?: number;
  /** Cap on decompressed/compressed size for `.gz` files (zip-bomb defence). Default 200. */
  maxRatio?: number;
  /** The ratio is enforced only once this many bytes have been produced. Default 1 MiB. */
  ratioFloorBytes?: number;
}

const CHUNK_BYTES = 1 << 20;

/**
 * Feeds every chunk of `source` to `onChunk`. Paths ending in `.gz` are gunzipped while streaming, with the size
 * and ratio caps checked as bytes arrive; a truncated or corrupt stream is GZIP_CORRUPT naming `file`.
 */
export async function forEachChunk(
  source: ByteSource,
  file: string,
  onChunk: (chunk: Uint8Array) => void,
  limits: DecompressLimits = {},
): Promise<void> {
  if (typeof source !== 'string') {
    for await (const chunk of source) onChunk(chunk);
    return;
  }
  const raw = createReadStream(source, { highWaterMark: CHUNK_BYTES });
  if (!source.endsWith('.gz')) {
    try {
      for await (const chunk of raw) onChunk(chunk as Buffer);
    } catch (err) {
      throw ioError(err, file);
    } finally {
      raw.destroy();
    }
    return;
  }
  const compressedBytes = await stat(source).then((s) => s.size, (err: unknown) => Promise.reject(ioError(err, file) as Error));
  const maxBytes = limits.maxBytes ?? 4 * 1024 ** 3;
  const maxRatio = limits.maxRatio ?? 200;
  const floor = limits.ratioFloorBytes ?? 1024 * 1024;
  const gunzip = createGunzip({ chunkSize: 256 * 1024 });
  raw.on('error', (err) => gunzip.destroy(err));
  raw.pipe(gunzip);
  let produced = 0;
  try {
    for await (const chunk of gunzip) {
      produced += (chunk as Buffer).length;
      if (produced > maxBytes) {
        throw new BundleError('ARCHIVE_TOO_LARGE', `decompresses to more than ${maxBytes} bytes`, { file });
      }
      if (produced > floor && produced > maxRatio * compressedBytes) {
        throw new BundleError('ARCHIVE_RATIO', `decompresses more than ${maxRatio}:1 (${compressedBytes} compressed bytes)`, { file });
      }
      onChunk(chunk as Buffer);
    }
  } catch (err) {
    const code = (err as NodeJS.ErrnoException | null)?.code;
    if (typeof code === 'string' && code.startsWith('Z_')) {
      throw new BundleError('GZIP_CORRUPT', `gzip stream is corrupt or truncated: ${(err as Error).message}`, { file, cause: err });
    }
    throw ioError(err, file);
  } finally {
    raw.unpipe(gunzip);
    raw.destroy();
    gunzip.destroy();
  }
}

/** File-system errors become FILE_MISSING naming the file; anything else (a BundleError, a bug) passes through. */
function ioError(err: unknown, file: string): unknown {
  const code = (err as NodeJS.ErrnoException | null)?.code;
  if (err instanceof BundleError || typeof code !== 'string') return err;
  if (code === 'ENOENT') return new BundleError('FILE_MISSING', 'file not found', { file, cause: err });
  return new BundleError('FILE_MISSING', `cannot read file: ${(err as Error).message}`, { file, cause: err });
}
