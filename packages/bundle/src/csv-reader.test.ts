import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { readGnssCsv, readImuCsv, readLoopsCsv, readOdometryCsv } from './csv-tables.ts';
import { BundleError } from './errors.ts';
import { chunked, enc, imuCsv, removeTempDirs, tempDir, T0 } from './test-fixtures.ts';

afterAll(removeTempDirs);

/** Runs `fn` and returns the BundleError it throws (fails the test if it does not throw one). */
async function bundleError(fn: () => Promise<unknown>): Promise<BundleError> {
  try {
    await fn();
  } catch (err) {
    expect(err).toBeInstanceOf(BundleError);
    return err as BundleError;
  }
  throw new Error('expected a BundleError');
}

const imuFrom = (text: string, opts = {}) => readImuCsv([enc(text)], { file: 'imu.csv', ...opts });

describe('round trip of every CSV type', () => {
  it('imu.csv: values written with toString read back exactly', async () => {
    const rows = fc.sample(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e6, max: 1e6 }), { minLength: 6, maxLength: 6 }), { numRuns: 50, seed: 7 });
    let text = 't,gx,gy,gz,ax,ay,az\n';
    rows.forEach((r, i) => (text += `${T0 + i * 0.0025},${r.join(',')}\n`));
    const { columns, stats } = await imuFrom(text);
    expect(columns.n).toBe(50);
    expect(stats).toMatchObject({ lines: 51, samples: 50, badLines: 0, nonFinite: 0, extraColumns: [] });
    const names = ['gx', 'gy', 'gz', 'ax', 'ay', 'az'] as const;
    rows.forEach((r, i) => {
      expect(columns.t[i]).toBe(Number(`${T0 + i * 0.0025}`));
      names.forEach((k, j) => expect(Object.is(columns[k][i], r[j]! === 0 ? 0 : r[j])).toBe(true));
    });
  });
  it('odometry.csv with quality, columns in another order', async () => {
    const text = 'qz,qy,qx,qw,z,y,x,t,quality\n0,0,0,1,3,2,1,100.5,0.75\n0.6,0,0,0.8,-3,-2,-1,100.6,1\n';
    const { columns } = await readOdometryCsv([enc(text)]);
    expect(columns.n).toBe(2);
    expect([...columns.t]).toEqual([100.5, 100.6]);
    expect([...columns.x]).toEqual([1, -1]);
    expect([...columns.qw]).toEqual([1, 0.8]);
    expect([...columns.qz]).toEqual([0, 0.6]);
    expect(columns.quality && [...columns.quality]).toEqual([0.75, 1]);
  });
  it('odometry.csv without quality has quality null', async () => {
    const { columns } = await readOdometryCsv([enc('t,x,y,z,qw,qx,qy,qz\n1,0,0,0,1,0,0,0\n2,0,0,0,1,0,0,0\n')]);
    expect(columns.quality).toBeNull();
  });
  it('gnss.csv with and without accuracies', async () => {
    const text = 't,lat,lon,alt,fix,hacc,vacc\n1796000000,47.3821,8.5412,412.0,4,0.02,0.05\n1796000001,47.38211,8.54121,412.1,1,,\n';
    const { columns } = await readGnssCsv([enc(text)]);
    expect([...columns.lat]).toEqual([47.3821, 47.38211]);
    expect([...columns.fix]).toEqual([4, 1]);
    expect(columns.hacc[0]).toBe(0.02);
    expect(Number.isNaN(columns.hacc[1]!)).toBe(true);
    expect(Number.isNaN(columns.hdop[0]!)).toBe(true); // hdop column absent
  });
  it('loops.csv with and without sigmas; header-only loops and GNSS files are accepted', async () => {
    const { columns } = await readLoopsCsv([enc('t_a,t_b,x,y,z,qw,qx,qy,qz\n10,90,0.1,0.2,0.3,1,0,0,0\n')]);
    expect(columns).toMatchObject({ n: 1 });
    expect([columns.tA[0], columns.tB[0], columns.z[0]]).toEqual([10, 90, 0.3]);
    expect(Number.isNaN(columns.sigmaT[0]!)).toBe(true);
    const empty = await readLoopsCsv([enc('t_a,t_b,x,y,z,qw,qx,qy,qz,sigma_t,sigma_r\n')]);
    expect(empty.columns.n).toBe(0);
    const noFix = await readGnssCsv([enc('t,lat,lon,alt,fix\n')]);
    expect(noFix.columns.n).toBe(0);
  });
  it('gzip-compressed CSV on disk reads like the plain file', async () => {
    const dir = await tempDir();
    const text = imuCsv(500);
    await writeFile(join(dir, 'imu.csv'), text);
    await writeFile(join(dir, 'imu.csv.gz'), gzipSync(text));
    const plain = await readImuCsv(join(dir, 'imu.csv'));
    const gz = await readImuCsv(join(dir, 'imu.csv.gz'));
    expect(gz.columns.n).toBe(500);
    expect([...gz.columns.az]).toEqual([...plain.columns.az]);
  });
});

describe('chunk boundaries and line endings', () => {
  const text = '\uFEFF# exported by test\r\nt,gx,gy,gz,ax,ay,az\r\n\r\n1,0.1,0.2,0.3,0.4,0.5,9.81\r\n# mid comment\n  \n2,-1e-3,2E2,3,4,5,6\n3,.5,5.,-0,1,2,3';
  it('1-byte and 7-byte chunks give the same columns as one chunk; CRLF, BOM, comments, no final newline', async () => {
    const whole = await imuFrom(text);
    expect(whole.columns.n).toBe(3);
    expect([...whole.columns.gy]).toEqual([0.2, 200, 5]);
    expect(whole.stats.lines).toBe(8);
    for (const size of [1, 7]) {
      const r = await readImuCsv(chunked(enc(text), size), { file: 'imu.csv' });
      expect(r.stats).toEqual(whole.stats);
      for (const k of ['t', 'gx', 'gy', 'gz', 'ax', 'ay', 'az'] as const) expect([...r.columns[k]]).toEqual([...whole.columns[k]]);
    }
  });
});

describe('header problems', () => {
  it('missing column names the file, header line and expected header', async () => {
    const e = await bundleError(() => imuFrom('# c\nt,gx,gy,gz,ax,ay\n1,2,3,4,5,6\n'));
    expect(e).toMatchObject({ code: 'CSV_MISSING_COLUMN', file: 'imu.csv', line: 2, column: 7 });
    expect(e.message).toContain('az');
  });
  it('renamed column points at the unknown name', async () => {
    const e = await bundleError(() => imuFrom('t,gyro_x,gy,gz,ax,ay,az\n1,2,3,4,5,6,7\n'));
    expect(e).toMatchObject({ code: 'CSV_MISSING_COLUMN', line: 1, column: 2 });
    expect(e.message).toContain('"gyro_x"');
  });
  it('extra column is ignored and reported', async () => {
    const r = await imuFrom('t,gx,gy,gz,temp_c,ax,ay,az\n1,2,3,4,hot,5,6,7\n2,2,3,4,,8,6,7\n');
    expect(r.stats.extraColumns).toEqual(['temp_c']);
    expect([...r.columns.ax]).toEqual([5, 8]);
  });
  it('header names may be quoted and in any case', async () => {
    const r = await imuFrom('"T","GX",gy,gz,ax,ay,Az\n1,2,3,4,5,6,7\n2,3,4,5,6,7,8\n');
    expect([...r.columns.gx, ...r.columns.az]).toEqual([2, 3, 7, 8]);
  });
  it('duplicate column is rejected', async () => {
    const e = await bundleError(() => imuFrom('t,gx,gx,gy,gz,ax,ay,az\n'));
    expect(e).toMatchObject({ code: 'CSV_BAD_HEADER', line: 1, column: 3 });
  });
  it('empty file and comment-only file are CSV_EMPTY; header only or a single pose is CSV_NO_DATA', async () => {
    expect((await bundleError(() => imuFrom(''))).code).toBe('CSV_EMPTY');
    expect((await bundleError(() => imuFrom('# nothing\n\n'))).code).toBe('CSV_EMPTY');
    expect(await bundleError(() => imuFrom('t,gx,gy,gz,ax,ay,az\n'))).toMatchObject({ code: 'CSV_NO_DATA', file: 'imu.csv' });
    const one = await bundleError(() => readOdometryCsv([enc('t,x,y,z,qw,qx,qy,qz\n1,0,0,0,1,0,0,0\n')], { file: 'odometry.csv' }));
    expect(one).toMatchObject({ code: 'CSV_NO_DATA', line: 2 });
    expect(one.message).toContain('at least 2 data rows, has 1');
  });
  it('non-UTF-8 header gives the byte column', async () => {
    const bytes = Buffer.concat([Buffer.from('t,gx,gy,g'), Buffer.from([0xff, 0x7a]), Buffer.from(',ax,ay,az\n1,2,3,4,5,6,7\n')]);
    const e = await bundleError(() => readImuCsv([bytes], { file: 'imu.csv' }));
    expect(e).toMatchObject({ code: 'NOT_UTF8', line: 1, column: 10 });
  });
});

/** 200 good IMU rows with `bad` inserted as data line `at` (0-based). */
function withBadLine(bad: string, at = 100, rows = 200): string {
  const lines = imuCsv(rows).trimEnd().split('\n');
  lines.splice(at + 1, 0, bad);
  return lines.join('\n') + '\n';
}

describe('malformed data lines', () => {
  it('wrong field count is counted with line and column; the rest is kept', async () => {
    const r = await imuFrom(withBadLine(`${T0 + 0.5001},1,2,3,4,5`));
    expect(r.columns.n).toBe(200);
    expect(r.stats.badLines).toBe(1);
    expect(r.stats.firstErrors).toEqual([{ line: 102, column: 7, message: 'expected 7 fields, found 6' }]);
    const more = await imuFrom(withBadLine(`${T0 + 0.5001},1,2,3,4,5,6,7`));
    expect(more.stats.firstErrors[0]).toMatchObject({ line: 102, column: 8, message: 'expected 7 fields, found more' });
  });
  it('bad number names the column and shows the text', async () => {
    const r = await imuFrom(withBadLine(`${T0 + 0.5001},1,2,3,4x,5,6`));
    expect(r.stats.firstErrors[0]).toEqual({ line: 102, column: 5, message: 'expected a number in column "ax", found "4x"' });
    const empty = await imuFrom(withBadLine(`${T0 + 0.5001},1,,3,4,5,6`));
    expect(empty.stats.firstErrors[0]).toMatchObject({ line: 102, column: 3 });
  });
  it('time that does not increase is a bad line', async () => {
    const r = await imuFrom(withBadLine(`${T0},1,2,3,4,5,6`));
    expect(r.stats.badLines).toBe(1);
    expect(r.stats.firstErrors[0]).toMatchObject({ line: 102, column: 1 });
  });
  it('NaN and Inf rows are counted and dropped', async () => {
    const r = await imuFrom(withBadLine(`${T0 + 0.5001},1,nan,3,4,5,6`));
    expect(r.stats).toMatchObject({ nonFinite: 1, badLines: 0, samples: 200 });
    expect(r.stats.firstErrors[0]).toEqual({ line: 102, column: 3, message: 'non-finite value in column "gy"' });
    // 2 of 102 data lines non-finite (1.96 %) is over the 1 % limit
    const e = await bundleError(() => imuFrom(imuCsv(100) + `${T0 + 1},0,0,0,0,0,inf\n${T0 + 2},0,0,0,0,0,-Infinity\n`));
    expect(e.code).toBe('CSV_TOO_MANY_NON_FINITE');
  });
  it('more bad lines than the fraction rejects the file, locating the first', async () => {
    // 2 bad of 202 data lines = 0.99 % is accepted; 3 of 203 = 1.48 % is not (limit 1 %)
    const two = withBadLine('x', 50).replace(/\n/, '\nrubbish\n');
    expect((await imuFrom(two)).stats.badLines).toBe(2);
    const three = withBadLine('x', 50).replace(/\n/, '\nrubbish\nmore rubbish\n');
    const e = await bundleError(() => imuFrom(three));
    expect(e).toMatchObject({ code: 'CSV_TOO_MANY_BAD_LINES', file: 'imu.csv', line: 2, column: 1 });
    expect(e.issues).toHaveLength(3);
  });
  it('a 1 MB line is LINE_TOO_LONG naming its line, without buffering it whole', async () => {
    const text = `t,gx,gy,gz,ax,ay,az\n1,2,3,4,5,6,7\n${'9'.repeat(1024 * 1024)}\n`;
    for (const chunks of [[enc(text)], chunked(enc(text), 4096)]) {
      const e = await bundleError(() => readImuCsv(chunks, { file: 'imu.csv' }));
      expect(e).toMatchObject({ code: 'LINE_TOO_LONG', file: 'imu.csv', line: 3, column: 65537 });
    }
  });
  it('quaternions off unit norm are bad lines; near-unit ones are renormalised', async () => {
    const text = 't,x,y,z,qw,qx,qy,qz\n' + Array.from({ length: 150 }, (_, i) => `${i},0,0,0,1.0004,0,0,0`).join('\n') + '\n150,0,0,0,2,0,0,0\n';
    const r = await readOdometryCsv([enc(text)], { file: 'odometry.csv' });
    expect(r.columns.n).toBe(150);
    expect(r.columns.qw[0]).toBe(1);
    expect(r.stats.firstErrors[0]).toMatchObject({ line: 152, column: 5 });
  });
  it('GNSS fix code and latitude range are checked', async () => {
    const good = Array.from({ length: 300 }, (_, i) => `${i},47.38,8.54,412,4`).join('\n');
    const r = await readGnssCsv([enc(`t,lat,lon,alt,fix\n${good}\n301,95,8.54,412,4\n302,47.38,8.54,412,1.5\n`)]);
    expect(r.stats.firstErrors.map((e) => [e.line, e.column])).toEqual([[302, 2], [303, 5]]);
  });
});

describe('gzip problems', () => {
  it('truncated and corrupt gzip are GZIP_CORRUPT naming the file', async () => {
    const dir = await tempDir();
    const gz = gzipSync(imuCsv(3000));
    await writeFile(join(dir, 'cut.csv.gz'), gz.subarray(0, Math.floor(gz.length / 2)));
    const corrupt = Buffer.from(gz);
    for (let i = 100; i < 140; i++) corrupt[i] = corrupt[i]! ^ 0x5a;
    await writeFile(join(dir, 'bad.csv.gz'), corrupt);
    expect(await bundleError(() => readImuCsv(join(dir, 'cut.csv.gz'), { file: 'imu.csv.gz' }))).toMatchObject({ code: 'GZIP_CORRUPT', file: 'imu.csv.gz' });
    expect(await bundleError(() => readImuCsv(join(dir, 'bad.csv.gz'), { file: 'imu.csv.gz' }))).toMatchObject({ code: 'GZIP_CORRUPT' });
  });
  it('a gzip bomb is stopped by the ratio cap while streaming', async () => {
    const dir = await tempDir();
    const line = `${T0},0,0,0,0,0,9.81\n`;
    await writeFile(join(dir, 'bomb.csv.gz'), gzipSync('t,gx,gy,gz,ax,ay,az\n' + line.repeat(200_000), { level: 9 }));
    const e = await bundleError(() => readImuCsv(join(dir, 'bomb.csv.gz'), { file: 'imu.csv.gz' }));
    expect(e).toMatchObject({ code: 'ARCHIVE_RATIO', file: 'imu.csv.gz' });
  });
});
