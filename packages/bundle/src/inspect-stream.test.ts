import { randomBytes } from 'node:crypto';
import { readdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { ArchiveLimits } from './archive-extractor.ts';
import { createUploadInspector } from './inspect-stream.ts';
import { inspectBundle, type BundleSummary } from './read-bundle.ts';
import { bundleFiles, chunked, filesAsTarEntries, filesAsZipEntries, removeTempDirs, tarBuffer, tempDir, zipBuffer } from './test-fixtures.ts';

afterAll(removeTempDirs);

/**
 * The streaming upload check must give what `inspectBundle` gives on the stored file: the same summary for a good
 * archive, the same error code for a bad one, null (inspect the file) for zip, and no temporary files left.
 */
type Outcome = { summary: BundleSummary | null } | { code: string };

async function streamed(bytes: Buffer, chunkBytes: number, limits: ArchiveLimits): Promise<Outcome> {
  // a loose bound, as when only the upload cap is known: the exact ratio check then happens at the end
  const inspector = createUploadInspector({ name: 'upload', limits, maxCompressedBytes: bytes.length * 8 });
  for (const c of chunked(bytes, chunkBytes)) await inspector.write(c);
  try {
    return { summary: await inspector.end(bytes.length) };
  } catch (e) {
    return { code: (e as { code: string }).code };
  }
}

async function fromFile(bytes: Buffer, limits: ArchiveLimits): Promise<Outcome> {
  const path = join(await tempDir(), 'bundle.bin');
  await writeFile(path, bytes);
  try {
    return { summary: await inspectBundle(path, { limits }) };
  } catch (e) {
    return { code: (e as { code: string }).code };
  }
}

async function same(bytes: Buffer, limits: ArchiveLimits = {}): Promise<Outcome> {
  const tmp = await tempDir();
  const file = await fromFile(bytes, { ...limits, tmpDir: tmp });
  for (const size of [7, 4096, 1 << 20]) {
    expect(await streamed(bytes, size, { ...limits, tmpDir: tmp })).toEqual(file);
  }
  expect(await readdir(tmp)).toEqual([]);
  return file;
}

const files = bundleFiles();

describe('streaming upload check against the file check', () => {
  it('reads the manifest of a good .tar.gz and .tar', async () => {
    const gz = await same(await tarBuffer(filesAsTarEntries(files, 'run-0001/'), true));
    expect('summary' in gz && gz.summary?.manifest.robot_id).toBeTruthy();
    expect('summary' in gz && gz.summary?.kind).toBe('tar.gz');
    const tar = await same(await tarBuffer(filesAsTarEntries(files)));
    expect('summary' in tar && tar.summary?.kind).toBe('tar');
  });

  it('gives the summary of the file check for an archive of several MiB fed in request-sized chunks', async () => {
    // incompressible bytes, so the compressed stream spans several of the check's 1 MiB feed pieces and inflate jobs
    const noise = { name: 'imu.csv.gz', data: new Uint8Array(randomBytes(5 * 1024 * 1024 + 321)) };
    const bytes = await tarBuffer([...filesAsTarEntries(files), noise], true);
    const tmp = await tempDir();
    const file = await fromFile(bytes, { tmpDir: tmp });
    expect('summary' in file && file.summary?.entries).toContain('imu.csv.gz');
    expect(await streamed(bytes, 65_536, { tmpDir: tmp })).toEqual(file);
    expect(await streamed(bytes.subarray(0, bytes.length - 100_000), 65_536, { tmpDir: tmp })).toEqual({ code: 'ARCHIVE_CORRUPT' });
    expect(await readdir(tmp)).toEqual([]);
  });

  it('refuses a gzip bomb with ARCHIVE_RATIO, also when a later entry breaks another limit', async () => {
    const zeros = { name: 'zeros.bin', data: new Uint8Array(8 * 1024 * 1024) };
    expect(await same(await tarBuffer([zeros], true))).toEqual({ code: 'ARCHIVE_RATIO' });
    // the file check stops at the ratio before it reaches the 65th entry; the stream must report the same
    const many = Array.from({ length: 65 }, (_, i) => ({ name: `f${i}.txt`, data: 'x' }));
    expect(await same(await tarBuffer([zeros, ...many], true))).toEqual({ code: 'ARCHIVE_RATIO' });
  });

  it('refuses too many entries, too large content, a truncated stream and a missing manifest alike', async () => {
    const many = Array.from({ length: 65 }, (_, i) => ({ name: `f${i}.txt`, data: 'x' }));
    expect(await same(await tarBuffer(many, true))).toEqual({ code: 'ARCHIVE_TOO_MANY_ENTRIES' });
    expect(await same(await tarBuffer(filesAsTarEntries(files), true), { maxTotalBytes: 10_000 })).toEqual({ code: 'ARCHIVE_TOO_LARGE' });
    const whole = await tarBuffer(filesAsTarEntries(files), true);
    expect(await same(whole.subarray(0, Math.floor(whole.length / 2)))).toEqual({ code: 'ARCHIVE_CORRUPT' });
    const { ['run.json']: _manifest, ...rest } = files;
    const missing = await same(await tarBuffer(filesAsTarEntries(rest), true));
    expect('code' in missing).toBe(true);
  });

  it('treats bytes after the archive like the file check does, without stalling the upload', async () => {
    const gz = await tarBuffer(filesAsTarEntries(files), true);
    const tar = await tarBuffer(filesAsTarEntries(files));
    const junk = Buffer.alloc(3 << 20, 0x5a);
    // the extraction stops at the junk; the stream must go on taking bytes (no back-pressure stall) and say the same
    expect(await same(Buffer.concat([gz, junk]))).toEqual({ code: 'ARCHIVE_CORRUPT' });
    expect(await same(Buffer.concat([tar, junk]))).toEqual({ code: 'ARCHIVE_CORRUPT' });
  });

  it('does not stall the upload when its temporary directory cannot be made', async () => {
    const gz = Buffer.concat([await tarBuffer(filesAsTarEntries(files), true), Buffer.alloc(3 << 20)]);
    const inspector = createUploadInspector({ name: 'upload', limits: { tmpDir: '/nonexistent/plumbline' }, maxCompressedBytes: gz.length });
    for (const c of chunked(gz, 65536)) await inspector.write(c);
    await expect(inspector.end(gz.length)).rejects.toMatchObject({ code: 'ENOENT' });
  });

  it('leaves zip to the file check', async () => {
    const zip = await zipBuffer(filesAsZipEntries(files));
    expect(await streamed(zip, 4096, { tmpDir: await tempDir() })).toEqual({ summary: null });
  });
});
