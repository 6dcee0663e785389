import { readdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { BundleError } from './errors.ts';
import { inspectBundle, readBundle } from './read-bundle.ts';
import {
  bundleFiles, filesAsTarEntries, filesAsZipEntries, imuCsv, manifest, removeTempDirs, T0, tarBuffer, tempDir, writeFiles, zipBuffer, type FileMap,
} from './test-fixtures.ts';

afterAll(removeTempDirs);

async function asDir(files: FileMap): Promise<string> {
  const dir = await tempDir();
  await writeFiles(dir, files);
  return dir;
}

describe('readBundle', () => {
  it('reads every file of a directory bundle into columns', async () => {
    const b = await readBundle(await asDir(bundleFiles()));
    expect(b.kind).toBe('directory');
    expect(b.manifest.robot_id).toBe('kestrel-01');
    expect(b.imu.n).toBe(2000);
    expect(b.imu.t[1]).toBe(T0 + 0.005);
    expect(b.imu.az[0]).toBe(9.81);
    expect(b.odometry.n).toBe(200);
    expect(b.odometry.quality).toBeNull();
    expect(b.gnss?.n).toBe(2);
    // 4722.9260 N = 47° 22.926′ = 47.3821° (harbourside-depot origin); 00832.4720 E = 8.5412°
    expect(b.gnss?.lat[0]).toBeCloseTo(47.3821, 9);
    expect(b.gnss?.lon[0]).toBeCloseTo(8.5412, 9);
    expect(b.gnss?.alt[0]).toBeCloseTo(412.0, 9);
    expect(b.gnss?.t[0]).toBe(Date.UTC(2026, 10, 30, 6) / 1000);
    expect(b.loops?.n).toBe(1);
    expect(b.stats.imu).toMatchObject({ file: 'imu.csv', samples: 2000, badLines: 0 });
    expect(b.stats.gnss?.file).toBe('gnss.nmea');
  });
  it('tar.gz and zip bundles read the same as the directory', async () => {
    const files = bundleFiles();
    const dir = await tempDir();
    await writeFile(join(dir, 'run.tgz'), await tarBuffer(filesAsTarEntries(files, 'run/'), true));
    await writeFile(join(dir, 'run.zip'), await zipBuffer(filesAsZipEntries(files)));
    const ref = await readBundle(await asDir(files));
    for (const name of ['run.tgz', 'run.zip']) {
      const tmp = await tempDir();
      const b = await readBundle(join(dir, name), { limits: { tmpDir: tmp } });
      expect(await readdir(tmp)).toEqual([]); // extraction directory removed once the columns are in memory
      expect([...b.imu.gx]).toEqual([...ref.imu.gx]);
      expect([...b.odometry.qz]).toEqual([...ref.odometry.qz]);
      expect([...(b.gnss?.lat ?? [])]).toEqual([...(ref.gnss?.lat ?? [])]);
    }
  });
  it('reads gzip-compressed CSV and gnss.csv named by the manifest; optional files may be absent', async () => {
    const files: FileMap = {
      'run.json': JSON.stringify(manifest({ imu: { file: 'imu.csv.gz', rate_hz: 200 }, gnss: { file: 'gnss.csv' }, loops: undefined })),
      'odometry.csv': bundleFiles()['odometry.csv']!,
      'imu.csv.gz': gzipSync(imuCsv(1000)),
      'gnss.csv': `t,lat,lon,alt,fix,hacc,vacc\n${T0},47.4013,8.5897,430.0,4,0.02,0.04\n`,
    };
    const b = await readBundle(await asDir(files));
    expect(b.imu.n).toBe(1000);
    expect(b.gnss?.lat[0]).toBe(47.4013);
    expect(b.loops).toBeNull();
    expect(b.stats.loops).toBeNull();
  });
  it('a bad data file is a BundleError naming that file', async () => {
    const files = bundleFiles();
    files['imu.csv'] = 't,gx,gy,gz,ax,ay\n1,2,3,4,5,6\n';
    const err = await readBundle(await asDir(files)).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(BundleError);
    expect(err).toMatchObject({ code: 'CSV_MISSING_COLUMN', file: 'imu.csv', line: 1 });
  });
});

describe('inspectBundle', () => {
  it('returns the manifest of an archive without reading the data', async () => {
    const files = bundleFiles();
    files['imu.csv'] = 'not even csv';
    const dir = await tempDir();
    await writeFile(join(dir, 'run.zip'), await zipBuffer(filesAsZipEntries(files)));
    const s = await inspectBundle(join(dir, 'run.zip'), { limits: { tmpDir: await tempDir() } });
    expect(s.manifest.robot_id).toBe('kestrel-01');
    expect(s.entries.sort()).toEqual(Object.keys(files).sort());
  });
  it('does not inflate zip data: a damaged imu.csv passes inspection and fails the full read', async () => {
    const zip = Buffer.from(await zipBuffer(filesAsZipEntries(bundleFiles())));
    const nameAt = zip.indexOf('imu.csv'); // file name in the local header (30 fixed bytes before it)
    const extraLen = zip.readUInt16LE(nameAt - 30 + 28);
    const dataAt = nameAt + 'imu.csv'.length + extraLen;
    for (let i = dataAt + 50; i < dataAt + 150; i++) zip[i] = zip[i]! ^ 0xff;
    const dir = await tempDir();
    await writeFile(join(dir, 'run.zip'), zip);
    expect((await inspectBundle(join(dir, 'run.zip'))).manifest.run_id).toBe('kestrel-01-20261130-0600');
    await expect(readBundle(join(dir, 'run.zip'))).rejects.toMatchObject({ code: 'ARCHIVE_CORRUPT', file: 'run.zip' });
  });
  it('still enforces the limits on data it does not keep', async () => {
    const dir = await tempDir();
    const bomb = [...filesAsTarEntries(bundleFiles()), { name: 'zeros.bin', data: new Uint8Array(8 * 1024 * 1024) }];
    await writeFile(join(dir, 'run.tgz'), await tarBuffer(bomb, true));
    // the bundle's CSV text compresses about 5:1, the zeros about 1000:1; the whole stream lands near 150:1
    await expect(inspectBundle(join(dir, 'run.tgz'), { limits: { maxRatio: 50 } })).rejects.toMatchObject({ code: 'ARCHIVE_RATIO' });
  });
  it('rejects a manifest naming a file the archive lacks', async () => {
    const files = bundleFiles();
    delete files['gnss.nmea'];
    const dir = await tempDir();
    await writeFile(join(dir, 'run.tar'), await tarBuffer(filesAsTarEntries(files)));
    await expect(inspectBundle(join(dir, 'run.tar'))).rejects.toMatchObject({ code: 'FILE_MISSING', file: 'gnss.nmea' });
  });
});
