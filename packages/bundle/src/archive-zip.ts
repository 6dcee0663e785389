import { PassThrough, type Readable } from 'node:stream';
import yauzl from 'yauzl';
import type { Extractor } from './archive-extractor.ts';
import { BundleError, isSystemError } from './errors.ts';

/** yauzl's name decoder (exported by the library, missing from its type declarations). */
const getFileNameLowLevel = (yauzl as unknown as {
  getFileNameLowLevel(flags: number, name: Buffer, extraFields: unknown[], strict: boolean): string;
}).getFileNameLowLevel;

const S_IFMT = 0o170000;
const S_IFREG = 0o100000;
const S_IFDIR = 0o040000;
const S_IFLNK = 0o120000;

function openZip(path: string): Promise<yauzl.ZipFile> {
  return new Promise((resolve, reject) => {
    // decodeStrings: false so that names are checked here, with our error codes, rather than inside the library
    const options = { lazyEntries: true, autoClose: true, validateEntrySizes: true, decodeStrings: false } as yauzl.Options;
    yauzl.open(path, options, (err, zip) => (err || !zip ? reject(err ?? new Error('no zip file')) : resolve(zip)));
  });
}

function nextEntry(zip: yauzl.ZipFile): Promise<yauzl.Entry | null> {
  return new Promise((resolve, reject) => {
    const onEntry = (e: yauzl.Entry) => done(null, e);
    const onEnd = () => done(null, null);
    const onError = (err: Error) => done(err, null);
    const done = (err: Error | null, e: yauzl.Entry | null) => {
      zip.off('entry', onEntry).off('end', onEnd).off('error', onError);
      if (err) reject(err);
      else resolve(e);
    };
    zip.on('entry', onEntry).on('end', onEnd).on('error', onError);
    zip.readEntry();
  });
}

function openEntry(zip: yauzl.ZipFile, entry: yauzl.Entry): Promise<Readable> {
  return new Promise((resolve, reject) => zip.openReadStream(entry, (err, s) => (err || !s ? reject(err ?? new Error('no stream')) : resolve(s))));
}

/**
 * Extracts a zip with yauzl, checking each entry's central-directory header (name, type bits, sizes, ratio)
 * before any of its bytes are inflated; sizes are verified again while streaming.
 */
export async function extractZip(path: string, ex: Extractor): Promise<void> {
  let zip: yauzl.ZipFile;
  try {
    zip = await openZip(path);
  } catch (err) {
    if (isSystemError(err)) throw err;
    throw new BundleError('ARCHIVE_CORRUPT', `zip is corrupt or truncated: ${(err as Error).message}`, { file: ex.archive, cause: err });
  }
  try {
    if (zip.entryCount > ex.limits.maxEntries) {
      throw new BundleError('ARCHIVE_TOO_MANY_ENTRIES', `${zip.entryCount} entries, more than ${ex.limits.maxEntries}`, { file: ex.archive });
    }
    for (;;) {
      const entry = await nextEntry(zip);
      if (entry === null) break;
      await extractEntry(zip, entry, ex);
    }
  } catch (err) {
    if (err instanceof BundleError || isSystemError(err)) throw err;
    throw new BundleError('ARCHIVE_CORRUPT', `zip is corrupt or truncated: ${(err as Error).message}`, { file: ex.archive, cause: err });
  } finally {
    zip.close();
  }
}

async function extractEntry(zip: yauzl.ZipFile, entry: yauzl.Entry, ex: Extractor): Promise<void> {
  const e = entry as yauzl.Entry & { fileNameRaw?: Buffer; extraFields: unknown[] };
  const rawName = getFileNameLowLevel(e.generalPurposeBitFlag, e.fileNameRaw ?? (e.fileName as unknown as Buffer), e.extraFields, true);
  const mode = (e.externalFileAttributes >>> 16) & S_IFMT;
  const isDir = rawName.endsWith('/') || mode === S_IFDIR;
  if (mode === S_IFLNK) {
    throw new BundleError('ARCHIVE_LINK', `entry "${rawName}" is a symbolic link; links are not allowed`, { file: ex.archive });
  }
  if (mode !== 0 && mode !== S_IFREG && mode !== S_IFDIR) {
    throw new BundleError('ARCHIVE_ENTRY_TYPE', `entry "${rawName}" is not a regular file or directory (mode ${mode.toString(8)})`, { file: ex.archive });
  }
  const name = ex.admit(rawName, isDir ? 0 : e.uncompressedSize);
  if (name === null) return;
  if (isDir) return ex.directory(name);
  const limits = ex.limits;
  if (e.uncompressedSize > limits.ratioFloorBytes && e.uncompressedSize > limits.maxRatio * e.compressedSize) {
    throw ex.ratioError(name, e.compressedSize);
  }
  if (!ex.keep(name)) return ex.placeholder(name);
  const stream = await openEntry(zip, entry);
  // Inflate errors may be emitted before the copy has subscribed (it first creates directories) or after it has
  // let go; routing them into a PassThrough that remembers its error covers both without an uncaught exception.
  const body = new PassThrough();
  body.on('error', () => {}); // the error stays in body.errored; the copy's pipeline reads it from there
  stream.on('error', (err: Error) => body.destroy(err));
  stream.pipe(body);
  try {
    await ex.file(name, body, e.uncompressedSize, e.compressedSize);
  } finally {
    stream.destroy();
  }
}
