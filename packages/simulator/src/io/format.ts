/**
 * Row formatting for the bundle CSV files. Fixed decimals chosen per column from its resolution (IMU quantum, 0.1 mm
 * positions, 1e-6 quaternion components, 1e-9° ≈ 0.1 mm latitude), which keeps files small and output byte-stable.
 * Rows are formatted in chunks of a few thousand lines: no per-file giant strings.
 */
import type { GnssBlock } from '../sensors/gnss.ts';
import type { ImuBlock } from '../sensors/imu.ts';
import type { LoopBlock } from '../sensors/loops.ts';
import type { OdometryBlock } from '../sensors/odometry.ts';
import type { TextSink } from './sink.ts';

const CHUNK_ROWS = 4000;

/** toFixed without a "-0.000" for tiny negatives. */
export function fx(v: number, d: number): string {
  const s = v.toFixed(d);
  return s.charCodeAt(0) === 45 && v > -(0.5 * 10 ** -d) ? s.slice(1) : s;
}

/** Decimals that represent a sample grid of `rateHz` exactly (at least 3, at most 6). */
export function timeDecimals(rateHz: number): number {
  for (let d = 3; d < 6; d++) if (Number.isInteger(Math.round((10 ** d / rateHz) * 1e6) / 1e6)) return d;
  return 6;
}

export const IMU_HEADER = 't,gx,gy,gz,ax,ay,az\n';
export const ODOMETRY_HEADER = 't,x,y,z,qw,qx,qy,qz,quality\n';
export const GNSS_HEADER = 't,lat,lon,alt,fix,hacc,vacc,hdop,sats\n';
export const LOOPS_HEADER = 't_a,t_b,x,y,z,qw,qx,qy,qz,sigma_t,sigma_r\n';

async function rows(sink: TextSink, n: number, row: (i: number) => string | null): Promise<void> {
  for (let i0 = 0; i0 < n; i0 += CHUNK_ROWS) {
    let text = '';
    const i1 = Math.min(n, i0 + CHUNK_ROWS);
    for (let i = i0; i < i1; i++) {
      const r = row(i);
      if (r !== null) text += r;
    }
    await sink.write(text);
  }
}

export function writeImuRows(sink: TextSink, b: ImuBlock, tDec: number, accelDec = 4): Promise<void> {
  return rows(sink, b.n, (i) =>
    `${b.t[i]!.toFixed(tDec)},${fx(b.gx[i]!, 5)},${fx(b.gy[i]!, 5)},${fx(b.gz[i]!, 5)},${fx(b.ax[i]!, accelDec)},${fx(b.ay[i]!, accelDec)},${fx(b.az[i]!, accelDec)}\n`,
  );
}

export function writeOdometryRows(sink: TextSink, b: OdometryBlock): Promise<void> {
  return rows(sink, b.n, (i) =>
    `${b.t[i]!.toFixed(6)},${fx(b.x[i]!, 4)},${fx(b.y[i]!, 4)},${fx(b.z[i]!, 4)},${fx(b.qw[i]!, 6)},${fx(b.qx[i]!, 6)},${fx(b.qy[i]!, 6)},${fx(b.qz[i]!, 6)},${b.quality[i]!.toFixed(2)}\n`,
  );
}

/** gnss.csv carries fixes only: epochs without a fix (fix 0) are left out, as the reader requires lat/lon. */
export function writeGnssRows(sink: TextSink, b: GnssBlock): Promise<void> {
  return rows(sink, b.n, (i) =>
    b.fix[i] === 0
      ? null
      : `${b.t[i]!.toFixed(3)},${b.lat[i]!.toFixed(9)},${b.lon[i]!.toFixed(9)},${b.alt[i]!.toFixed(3)},${b.fix[i]},${b.hacc[i]!.toFixed(3)},${b.vacc[i]!.toFixed(3)},${b.hdop[i]!.toFixed(2)},${b.sats[i]}\n`,
  );
}

export function writeLoopRows(sink: TextSink, b: LoopBlock): Promise<void> {
  return rows(sink, b.n, (i) =>
    `${b.tA[i]!.toFixed(6)},${b.tB[i]!.toFixed(6)},${fx(b.x[i]!, 4)},${fx(b.y[i]!, 4)},${fx(b.z[i]!, 4)},${fx(b.qw[i]!, 6)},${fx(b.qx[i]!, 6)},${fx(b.qy[i]!, 6)},${fx(b.qz[i]!, 6)},${b.sigmaT[i]!.toFixed(4)},${b.sigmaR[i]!.toFixed(4)}\n`,
  );
}
