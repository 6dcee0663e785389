/**
 * Corpus cases inside the data streams (CSV and NMEA). The upload check reads only the manifest, so these are
 * stored and then rejected by the analysis, with the file, line and column of the first problem.
 * In the generated files the header is line 1 and data row i is line i + 2.
 */
import { entriesOf, imuCsv, nmeaText, odometryCsv, runFiles, T0, tarGz } from './builders.ts';
import type { CorpusCase, Expect, Upload } from './generate.ts';

type Def = Omit<CorpusCase, 'bytes'> & { build: (runId: string) => Promise<Buffer> | Buffer };

const post: Upload = { via: 'post' };
const rejected = (bundle_code: string, file: string, line?: number, column?: number): Expect => ({
  kind: 'rejected', bundle_code, file, ...(line === undefined ? {} : { line }), ...(column === undefined ? {} : { column }),
});
const withFiles = (id: string, files: Record<string, string | Buffer | null>, m: Record<string, unknown> = {}) =>
  tarGz(entriesOf(runFiles(id, { files, manifest: m })));
/** Replaces field k (0-based) of a CSV line. */
const setField = (line: string, k: number, v: string) => line.split(',').map((f, j) => (j === k ? v : f)).join(',');
const GNSS_NMEA = { gnss: { file: 'gnss.nmea' } };

export function csvCases(): Def[] {
  const c = 'csv';
  const n = 'nmea';
  return [
    { id: 'imu-missing-column', class: c, what: 'imu.csv header without az', upload: post, expect: rejected('CSV_MISSING_COLUMN', 'imu.csv', 1, 7), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => l.split(',').slice(0, 6).join(',')).replace('t,gx,gy,gz,ax,ay,az', 't,gx,gy,gz,ax,ay') }) },
    { id: 'imu-renamed-column', class: c, what: 'imu.csv column az renamed accel_z', upload: post, expect: rejected('CSV_MISSING_COLUMN', 'imu.csv', 1, 7), build: (id) => withFiles(id, { 'imu.csv': imuCsv().replace(',az\n', ',accel_z\n') }) },
    { id: 'imu-duplicate-column', class: c, what: 'imu.csv header names gx twice', upload: post, expect: rejected('CSV_BAD_HEADER', 'imu.csv', 1, 8), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => `${l},0`).replace('t,gx,gy,gz,ax,ay,az', 't,gx,gy,gz,ax,ay,az,gx') }) },
    { id: 'odometry-extra-column', class: c, what: 'odometry.csv with an extra "covariance" column (ignored)', upload: post, expect: { kind: 'done' }, build: (id) => withFiles(id, { 'odometry.csv': odometryCsv(200, (_, l) => `${l},0.01`).replace('qz\n', 'qz,covariance\n') }) },
    { id: 'odometry-reordered-columns', class: c, what: 'odometry.csv columns in another order (matched by name)', upload: post, expect: { kind: 'done' }, build: (id) => withFiles(id, { 'odometry.csv': odometryCsv().split('\n').map((l) => { const f = l.split(','); return l ? [f[4], f[5], f[6], f[7], f[0], f[1], f[2], f[3]].join(',') : l; }).join('\n') }) },
    { id: 'imu-extra-fields', class: c, what: 'every 10th imu.csv row has an 8th field', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'imu.csv', 2, 8), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (i, l) => (i % 10 === 0 ? `${l},0` : l)) }) },
    { id: 'imu-missing-fields', class: c, what: 'every 10th imu.csv row lacks its last field', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'imu.csv', 3, 7), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (i, l) => (i % 10 === 1 ? l.slice(0, l.lastIndexOf(',')) : l)) }) },
    { id: 'imu-text-in-number', class: c, what: 'ay is "n/a" in every row', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'imu.csv', 2, 6), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => setField(l, 5, 'n/a')) }) },
    { id: 'imu-nan', class: c, what: 'gx is NaN in every row', upload: post, expect: rejected('CSV_TOO_MANY_NON_FINITE', 'imu.csv', 2, 2), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => setField(l, 1, 'NaN')) }) },
    { id: 'imu-inf', class: c, what: 'az is Infinity in every 20th row (5 %)', upload: post, expect: rejected('CSV_TOO_MANY_NON_FINITE', 'imu.csv', 5, 7), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (i, l) => (i % 20 === 3 ? setField(l, 6, 'inf') : l)) }) },
    { id: 'imu-one-nan', class: c, what: 'one NaN row in 2000 (0.05 %, under the 1 % tolerance)', upload: post, expect: { kind: 'done' }, build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (i, l) => (i === 1000 ? setField(l, 1, 'nan') : l)) }) },
    { id: 'odometry-time-backwards', class: c, what: 'every 10th odometry row steps back in time', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'odometry.csv', 7, 1), build: (id) => withFiles(id, { 'odometry.csv': odometryCsv(200, (i, l) => (i % 10 === 5 ? setField(l, 0, (T0 + (i - 2) * 0.05).toFixed(3)) : l)) }) },
    { id: 'imu-duplicate-timestamps', class: c, what: 'every 10th imu row repeats the previous time', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'imu.csv', 7, 1), build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (i, l) => (i % 10 === 5 ? setField(l, 0, (T0 + (i - 1) * 0.005).toFixed(3)) : l)) }) },
    { id: 'odometry-1mb-line', class: c, what: 'a 1 MiB line in odometry.csv (line limit 64 KiB)', upload: post, expect: rejected('LINE_TOO_LONG', 'odometry.csv', 52), build: (id) => withFiles(id, { 'odometry.csv': odometryCsv(200, (i, l) => (i === 50 ? setField(l, 1, '1'.repeat(1024 * 1024)) : l)) }) },
    { id: 'imu-empty', class: c, what: 'imu.csv of zero bytes', upload: post, expect: rejected('CSV_EMPTY', 'imu.csv', 1, 1), build: (id) => withFiles(id, { 'imu.csv': '' }) },
    { id: 'imu-header-only', class: c, what: 'imu.csv with a header and no rows', upload: post, expect: rejected('CSV_NO_DATA', 'imu.csv'), build: (id) => withFiles(id, { 'imu.csv': 't,gx,gy,gz,ax,ay,az\n' }) },
    { id: 'imu-header-not-utf8', class: c, what: 'a Latin-1 byte in the imu.csv header', upload: post, expect: rejected('NOT_UTF8', 'imu.csv', 1, 7), build: (id) => withFiles(id, { 'imu.csv': Buffer.concat([Buffer.from('t,gx,g'), Buffer.from([0xff]), Buffer.from(imuCsv().slice('t,gx,gy'.length))]) }) },
    { id: 'odometry-quat-not-unit', class: c, what: 'odometry quaternions scaled by 2 (norm 2)', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'odometry.csv', 2, 5), build: (id) => withFiles(id, { 'odometry.csv': odometryCsv(200, (_, l) => { const f = l.split(','); return setField(l, 4, String(2 * Number(f[4]))); }) }) },
    { id: 'imu-crlf-and-comments', class: c, what: 'CRLF line ends, a BOM and # comments (accepted)', upload: post, expect: { kind: 'done' }, build: (id) => withFiles(id, { 'imu.csv': `\ufeff# exported by the robot\r\n${imuCsv().replace(/\n/g, '\r\n')}` }) },
    { id: 'imu-accel-in-g', class: c, what: 'wrong units: specific force in g instead of m/s² (stored; the analysis must not call it sound)', upload: post, expect: { kind: 'done', notVerdict: 'sound' }, build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => { const f = l.split(','); return [f[0], f[1], f[2], f[3], ...[f[4], f[5], f[6]].map((v) => (Number(v) / 9.80665).toFixed(6))].join(','); }) }) },
    { id: 'imu-gyro-in-deg', class: c, what: 'wrong units: angular rate in deg/s instead of rad/s', upload: post, expect: { kind: 'done', notVerdict: 'sound' }, build: (id) => withFiles(id, { 'imu.csv': imuCsv(2000, (_, l) => { const f = l.split(','); return [f[0], ...[f[1], f[2], f[3]].map((v) => ((Number(v) * 180) / Math.PI).toFixed(6)), f[4], f[5], f[6]].join(','); }) }) },
    { id: 'gnss-csv-latitude', class: c, what: 'gnss.csv latitudes of 123 degrees', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'gnss.csv', 2, 2), build: (id) => withFiles(id, { 'gnss.csv': `t,lat,lon,alt,fix\n${Array.from({ length: 10 }, (_, i) => `${T0 + i},123.0,8.5412,412.0,4`).join('\n')}\n` }, { gnss: { file: 'gnss.csv' } }) },
    { id: 'loops-quat-not-unit', class: c, what: 'loops.csv with a zero quaternion', upload: post, expect: rejected('CSV_TOO_MANY_BAD_LINES', 'loops.csv', 2, 6), build: (id) => withFiles(id, { 'loops.csv': `t_a,t_b,x,y,z,qw,qx,qy,qz\n${T0 + 0.5},${T0 + 9.5},0,0,0,0,0,0,0\n` }, { loops: { file: 'loops.csv' } }) },
    { id: 'nmea-valid', class: n, what: 'valid GGA+RMC NMEA 0183 (control)', upload: post, expect: { kind: 'done' }, build: (id) => withFiles(id, { 'gnss.nmea': nmeaText() }, GNSS_NMEA) },
    { id: 'nmea-bad-checksums', class: n, what: 'every NMEA sentence with a wrong checksum', upload: post, expect: rejected('NMEA_TOO_MANY_BAD_LINES', 'gnss.nmea', 1), build: (id) => withFiles(id, { 'gnss.nmea': nmeaText(10, { badChecksum: true }) }, GNSS_NMEA) },
    { id: 'nmea-no-date', class: n, what: 'GGA without any RMC (no date)', upload: post, expect: rejected('NMEA_NO_DATE', 'gnss.nmea'), build: (id) => withFiles(id, { 'gnss.nmea': nmeaText(10, { rmc: false }) }, GNSS_NMEA) },
    { id: 'nmea-garbage', class: n, what: 'gnss.nmea holding binary noise lines', upload: post, expect: rejected('NMEA_TOO_MANY_BAD_LINES', 'gnss.nmea', 1), build: (id) => withFiles(id, { 'gnss.nmea': Array.from({ length: 20 }, (_, i) => `$GPGGA,${'z'.repeat(i + 5)}*ZZ`).join('\r\n') + '\r\n' }, GNSS_NMEA) },
  ];
}
