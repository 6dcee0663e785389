import type { GnssColumns, ImuColumns, LoopColumns, OdometryColumns } from './columns.ts';
import { forEachChunk, type ByteSource, type DecompressLimits } from './byte-source.ts';
import { CsvColumnParser, type CsvOptions, type CsvTableSpec, type ReadStats, type RowProblem } from './csv-reader.ts';

export interface CsvReadOptions extends CsvOptions, DecompressLimits {}

export interface ReadResult<C> {
  columns: C;
  stats: ReadStats;
}

const req = (name: string) => ({ name, required: true });
const opt = (name: string) => ({ name, required: false });

/** Time (spec column 0) must increase strictly from row to row. */
function increasingTime(cols: readonly Float64Array[], i: number): RowProblem | null {
  if (i === 0) return null;
  const t = cols[0]!;
  if (t[i]! > t[i - 1]!) return null;
  return { target: 0, message: `time ${t[i]} does not increase (previous row ${t[i - 1]})` };
}

/** Unit quaternion check in columns k..k+3 (w, x, y, z); within 1e-3 it is renormalised in place. */
function unitQuat(cols: readonly Float64Array[], i: number, k: number): RowProblem | null {
  const w = cols[k]!, x = cols[k + 1]!, y = cols[k + 2]!, z = cols[k + 3]!;
  const norm = Math.hypot(w[i]!, x[i]!, y[i]!, z[i]!);
  if (Math.abs(norm - 1) > 1e-3) return { target: k, message: `quaternion norm ${norm.toPrecision(6)} is not 1 (tolerance 1e-3)` };
  w[i] = w[i]! / norm;
  x[i] = x[i]! / norm;
  y[i] = y[i]! / norm;
  z[i] = z[i]! / norm;
  return null;
}

export const IMU_SPEC: CsvTableSpec = {
  columns: ['t', 'gx', 'gy', 'gz', 'ax', 'ay', 'az'].map(req),
  minRows: 2, // a rate needs two samples
  validateRow: increasingTime,
};

export const ODOMETRY_SPEC: CsvTableSpec = {
  columns: [...['t', 'x', 'y', 'z', 'qw', 'qx', 'qy', 'qz'].map(req), opt('quality')],
  minRows: 2, // a trajectory needs two poses
  validateRow(cols, i) {
    const q = cols[8]![i]!;
    if (q < 0 || q > 1) return { target: 8, message: `quality ${q} outside 0..1` };
    return increasingTime(cols, i) ?? unitQuat(cols, i, 4);
  },
};

export const GNSS_SPEC: CsvTableSpec = {
  columns: [...['t', 'lat', 'lon', 'alt', 'fix'].map(req), ...['hacc', 'vacc', 'hdop', 'sats'].map(opt)],
  // a run without a single fix (indoors all shift) is a run without GNSS, not a broken bundle
  minRows: 0,
  validateRow(cols, i) {
    const lat = cols[1]![i]!, lon = cols[2]![i]!, fix = cols[4]![i]!;
    if (Math.abs(lat) > 90) return { target: 1, message: `latitude ${lat} outside -90..90 degrees` };
    if (Math.abs(lon) > 180) return { target: 2, message: `longitude ${lon} outside -180..180 degrees` };
    if (!Number.isInteger(fix) || fix < 0 || fix > 9) return { target: 4, message: `fix ${fix} is not an NMEA 0183 GGA quality code 0..9` };
    for (let k = 5; k <= 6; k++) {
      if (cols[k]![i]! < 0) return { target: k, message: `accuracy ${cols[k]![i]} is negative` };
    }
    return increasingTime(cols, i);
  },
};

export const LOOPS_SPEC: CsvTableSpec = {
  columns: [...['t_a', 't_b', 'x', 'y', 'z', 'qw', 'qx', 'qy', 'qz'].map(req), opt('sigma_t'), opt('sigma_r')],
  minRows: 0,
  validateRow(cols, i) {
    for (let k = 9; k <= 10; k++) {
      if (cols[k]![i]! <= 0) return { target: k, message: `sigma ${cols[k]![i]} must be positive` };
    }
    return unitQuat(cols, i, 5);
  },
};

async function readTable(spec: CsvTableSpec, source: ByteSource, options: CsvReadOptions) {
  const file = options.file ?? (typeof source === 'string' ? source : 'input.csv');
  const parser = new CsvColumnParser(spec, { ...options, file });
  await forEachChunk(source, file, (chunk) => parser.push(chunk), options);
  return parser.finish();
}

/** Reads imu.csv (`t,gx,gy,gz,ax,ay,az`: s, rad/s, m/s² specific force, IMU frame); time strictly increasing. */
export async function readImuCsv(source: ByteSource, options: CsvReadOptions = {}): Promise<ReadResult<ImuColumns>> {
  const { n, columns: c, stats } = await readTable(IMU_SPEC, source, options);
  return { columns: { n, t: c[0]!, gx: c[1]!, gy: c[2]!, gz: c[3]!, ax: c[4]!, ay: c[5]!, az: c[6]! }, stats };
}

/** Reads odometry.csv (`t,x,y,z,qw,qx,qy,qz[,quality]`: world_T_body, metres, Hamilton w-first, renormalised). */
export async function readOdometryCsv(source: ByteSource, options: CsvReadOptions = {}): Promise<ReadResult<OdometryColumns>> {
  const { n, columns: c, present, stats } = await readTable(ODOMETRY_SPEC, source, options);
  const columns: OdometryColumns = {
    n, t: c[0]!, x: c[1]!, y: c[2]!, z: c[3]!, qw: c[4]!, qx: c[5]!, qy: c[6]!, qz: c[7]!,
    quality: present[8] ? c[8]! : null,
  };
  return { columns, stats };
}

/** Reads gnss.csv (`t,lat,lon,alt,fix[,hacc,vacc,hdop,sats]`: degrees, ellipsoidal m, GGA quality, 1-sigma m). */
export async function readGnssCsv(source: ByteSource, options: CsvReadOptions = {}): Promise<ReadResult<GnssColumns>> {
  const { n, columns: c, stats } = await readTable(GNSS_SPEC, source, options);
  const columns: GnssColumns = {
    n, t: c[0]!, lat: c[1]!, lon: c[2]!, alt: c[3]!, fix: c[4]!, hacc: c[5]!, vacc: c[6]!, hdop: c[7]!, sats: c[8]!,
  };
  return { columns, stats };
}

/** Reads loops.csv (`t_a,t_b,x,y,z,qw,qx,qy,qz[,sigma_t,sigma_r]`: body(t_b) in body(t_a); m, rad). */
export async function readLoopsCsv(source: ByteSource, options: CsvReadOptions = {}): Promise<ReadResult<LoopColumns>> {
  const { n, columns: c, stats } = await readTable(LOOPS_SPEC, source, options);
  const columns: LoopColumns = {
    n, tA: c[0]!, tB: c[1]!, x: c[2]!, y: c[3]!, z: c[4]!, qw: c[5]!, qx: c[6]!, qy: c[7]!, qz: c[8]!,
    sigmaT: c[9]!, sigmaR: c[10]!,
  };
  return { columns, stats };
}
