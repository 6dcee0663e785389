import { readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { openBundle, type OpenedBundle } from './archive.ts';
import { safeEntryName, type ArchiveLimits } from './archive-extractor.ts';
import { BundleError } from './errors.ts';
import {
  bundleFiles, filesAsTarEntries, filesAsZipEntries, patchName, removeTempDirs, tarBuffer, tempDir, writeFiles, zipBuffer, type TarEntry,
} from './test-fixtures.ts';

afterAll(removeTempDirs);

/** Writes `bytes` as `name` in a fresh directory and opens it with extraction into a private tmpDir. */
async function open(name: string, bytes: Buffer, limits: ArchiveLimits = {}): Promise<{ opened: OpenedBundle; tmp: string }> {
  const dir = await tempDir();
  const tmp = await tempDir();
  await writeFile(join(dir, name), bytes);
  return { opened: await openBundle(join(dir, name), { tmpDir: tmp, ...limits }), tmp };
}

/** Expects opening to fail with a BundleError and no leftover temporary directory. */
async function rejects(name: string, bytes: Buffer, limits: ArchiveLimits = {}): Promise<BundleError> {
  const dir = await tempDir();
  const tmp = await tempDir();
  await writeFile(join(dir, name), bytes);
  try {
    await openBundle(join(dir, name), { tmpDir: tmp, ...limits });
  } catch (err) {
    expect(err).toBeInstanceOf(BundleError);
    expect(await readdir(tmp)).toEqual([]); // extraction directory removed on failure
    return err as BundleError;
  }
  throw new Error('expected openBundle to fail');
}

const files = bundleFiles();

async function expectSameFiles(root: string): Promise<void> {
  for (const [name, data] of Object.entries(files)) {
    expect((await readFile(join(root, name))).toString('utf8'), name).toBe(data);
  }
}

describe('accepted bundle forms', () => {
  it('a directory is used in place', async () => {
    const dir = await tempDir();
    await writeFiles(dir, files);
    const b = await openBundle(dir);
    expect(b).toMatchObject({ root: dir, kind: 'directory' });
    await b.cleanup();
    await expectSameFiles(dir);
  });
  it.each([
    ['run.tar', false, ''],
    ['run.tar.gz', true, ''],
    ['run.tgz', true, 'kestrel-01-run/'],
  ])('%s (prefix "%s") extracts to a temp dir that cleanup removes', async (name, gz, prefix) => {
    const entries: TarEntry[] = prefix ? [{ name: prefix, type: 'directory' }] : [];
    const { opened, tmp } = await open(name, await tarBuffer([...entries, ...filesAsTarEntries(files, prefix)], gz));
    expect(opened.kind).toBe(gz ? 'tar.gz' : 'tar');
    await expectSameFiles(opened.root);
    expect(opened.root.endsWith(prefix ? 'kestrel-01-run' : '')).toBe(true);
    await opened.cleanup();
    await opened.cleanup();
    expect(await readdir(tmp)).toEqual([]);
  });
  it('zip, with and without a top-level directory', async () => {
    for (const prefix of ['', 'bundle/']) {
      const { opened, tmp } = await open('run.zip', await zipBuffer(filesAsZipEntries(files, prefix)));
      expect(opened.kind).toBe('zip');
      await expectSameFiles(opened.root);
      await opened.cleanup();
      expect(await readdir(tmp)).toEqual([]);
    }
  });
  it('a nested archive is extracted as a plain file, not unpacked', async () => {
    const inner = await zipBuffer([{ name: 'secret.csv', data: 'a,b\n' }]);
    const { opened } = await open('run.zip', await zipBuffer([...filesAsZipEntries(files), { name: 'extra/inner.zip', data: inner }]));
    expect(await readFile(join(opened.root, 'extra/inner.zip'))).toEqual(inner);
    expect(await readdir(join(opened.root, 'extra'))).toEqual(['inner.zip']);
    await opened.cleanup();
  });
  it('something else is BUNDLE_UNSUPPORTED; a missing path BUNDLE_NOT_FOUND', async () => {
    expect((await rejects('run.json', Buffer.from('{}'))).code).toBe('BUNDLE_UNSUPPORTED');
    await expect(openBundle('/nonexistent/run.tar')).rejects.toMatchObject({ code: 'BUNDLE_NOT_FOUND' });
  });
});

describe('entry names', () => {
  it('are normalised to relative POSIX paths; the root itself is null', () => {
    expect(safeEntryName('a.tar', './data//imu.csv')).toBe('data/imu.csv');
    expect(safeEntryName('a.tar', 'bundle/')).toBe('bundle');
    expect(safeEntryName('a.tar', './')).toBeNull();
  });
  it.each(['..', 'a/../../b', '/abs', 'C:/win', 'a\\b', 'nul\0byte'])('refuses %j', (name) => {
    expect(() => safeEntryName('a.tar', name)).toThrow(expect.objectContaining({ code: 'ARCHIVE_PATH_TRAVERSAL', file: 'a.tar' }));
  });
});

describe('tar entries that are refused', () => {
  const base = filesAsTarEntries(files);
  it.each([
    ['../evil.csv', 'ARCHIVE_PATH_TRAVERSAL', 'leaves the bundle root'],
    ['data/../../evil.csv', 'ARCHIVE_PATH_TRAVERSAL', 'leaves the bundle root'],
    ['/etc/cron.d/evil', 'ARCHIVE_PATH_TRAVERSAL', 'absolute path'],
  ])('%s -> %s', async (name, code, why) => {
    const e = await rejects('run.tar', await tarBuffer([...base, { name, data: 'x' }]));
    expect(e).toMatchObject({ code, file: 'run.tar' });
    expect(e.message).toContain(name);
    expect(e.message).toContain(why);
  });
  it('symbolic link is ARCHIVE_LINK naming the entry', async () => {
    const e = await rejects('run.tar', await tarBuffer([{ name: 'imu.csv', type: 'symlink', linkname: '/etc/passwd' }, ...base.slice(0, 1)]));
    expect(e.code).toBe('ARCHIVE_LINK');
    expect(e.message).toContain('"imu.csv" is a symbolic link');
  });
  it('hard link is ARCHIVE_LINK', async () => {
    const e = await rejects('run.tar.gz', await tarBuffer([...base, { name: 'copy.csv', type: 'link', linkname: 'imu.csv' }], true));
    expect(e.code).toBe('ARCHIVE_LINK');
    expect(e.message).toContain('"copy.csv" is a hard link');
  });
  it('device entry is ARCHIVE_ENTRY_TYPE', async () => {
    const e = await rejects('run.tar', await tarBuffer([{ name: 'null', type: 'character-device' }]));
    expect(e.code).toBe('ARCHIVE_ENTRY_TYPE');
  });
  it('duplicate entry is ARCHIVE_DUPLICATE', async () => {
    const e = await rejects('run.tar', await tarBuffer([...base, { name: './imu.csv', data: 'other' }]));
    expect(e).toMatchObject({ code: 'ARCHIVE_DUPLICATE' });
    expect(e.message).toContain('"imu.csv"');
  });
  it('a file where a directory is needed collides: ARCHIVE_DUPLICATE', async () => {
    const e = await rejects('run.tar', await tarBuffer([{ name: 'data', data: 'x' }, { name: 'data/imu.csv', data: 'y' }]));
    expect(e.code).toBe('ARCHIVE_DUPLICATE');
    expect(e.message).toContain('"data/imu.csv"');
  });
  it('too many entries is ARCHIVE_TOO_MANY_ENTRIES', async () => {
    const many = Array.from({ length: 65 }, (_, i) => ({ name: `f${i}.txt`, data: 'x' }));
    expect((await rejects('run.tar', await tarBuffer(many))).code).toBe('ARCHIVE_TOO_MANY_ENTRIES');
  });
  it('total size over the cap is ARCHIVE_TOO_LARGE', async () => {
    const e = await rejects('run.tar', await tarBuffer(base), { maxTotalBytes: 10_000 });
    expect(e.code).toBe('ARCHIVE_TOO_LARGE');
  });
  it('gzip bomb is ARCHIVE_RATIO, stopped while streaming', async () => {
    const bomb = await tarBuffer([{ name: 'zeros.bin', data: new Uint8Array(8 * 1024 * 1024) }], true);
    expect(bomb.length).toBeLessThan(8 * 1024 * 1024 / 200);
    expect((await rejects('run.tgz', bomb)).code).toBe('ARCHIVE_RATIO');
  });
  it('truncated and corrupt tar.gz are ARCHIVE_CORRUPT', async () => {
    const tgz = await tarBuffer(base, true);
    expect((await rejects('run.tgz', tgz.subarray(0, tgz.length >> 1))).code).toBe('ARCHIVE_CORRUPT');
    const bad = Buffer.from(tgz);
    for (let i = 200; i < 260; i++) bad[i] = bad[i]! ^ 0xa5;
    expect((await rejects('run.tgz', bad)).code).toBe('ARCHIVE_CORRUPT');
    const plain = await tarBuffer(base);
    expect((await rejects('run.tar', plain.subarray(0, 700))).code).toBe('ARCHIVE_CORRUPT');
  });
});

describe('zip entries that are refused', () => {
  const base = filesAsZipEntries(files);
  it('path traversal in a zip names the entry', async () => {
    const zip = patchName(await zipBuffer([...base, { name: 'aa/evil.csv', data: 'x' }]), 'aa/evil.csv', '../evil.csv');
    const e = await rejects('run.zip', zip);
    expect(e.code).toBe('ARCHIVE_PATH_TRAVERSAL');
    expect(e.message).toContain('"../evil.csv"');
    const abs = patchName(await zipBuffer([{ name: 'xtmp/evil', data: 'x' }]), 'xtmp/evil', '/tmp/evil');
    expect((await rejects('run.zip', abs)).code).toBe('ARCHIVE_PATH_TRAVERSAL');
  });
  it('zip bomb by per-entry ratio is refused from the header, before inflating', async () => {
    const e = await rejects('run.zip', await zipBuffer([...base, { name: 'zeros.bin', data: new Uint8Array(4 * 1024 * 1024) }]));
    expect(e.code).toBe('ARCHIVE_RATIO');
    expect(e.message).toContain('"zeros.bin"');
  });
  it('symlink entry (unix mode bits) is ARCHIVE_LINK', async () => {
    const e = await rejects('run.zip', await zipBuffer([{ name: 'imu.csv', data: '/etc/passwd', mode: 0o120777 }]));
    expect(e.code).toBe('ARCHIVE_LINK');
  });
  it('duplicate names and too many entries', async () => {
    expect((await rejects('run.zip', await zipBuffer([...base, { name: 'imu.csv', data: 'again' }]))).code).toBe('ARCHIVE_DUPLICATE');
    const many = Array.from({ length: 65 }, (_, i) => ({ name: `f${i}.txt`, data: 'x' }));
    expect((await rejects('run.zip', await zipBuffer(many))).code).toBe('ARCHIVE_TOO_MANY_ENTRIES');
  });
  it('truncated zip is ARCHIVE_CORRUPT', async () => {
    const zip = await zipBuffer(base);
    expect((await rejects('run.zip', zip.subarray(0, zip.length - 30))).code).toBe('ARCHIVE_CORRUPT');
  });
});

describe('gzip ratio of a legitimate bundle', () => {
  it('real CSV text compresses far below the 200:1 cap', async () => {
    const tar = await tarBuffer(filesAsTarEntries(files));
    expect(tar.length / gzipSync(tar).length).toBeLessThan(20);
  });
});
