/**
 * NMEA 0183 GGA and RMC sentences. Checksum: XOR of every byte between '$' and '*', two upper-case hex digits.
 * GGA altitude is above mean sea level with the geoid separation in its own field (ellipsoidal = MSL + separation).
 */
import type { GnssBlock } from '../sensors/gnss.ts';
import type { TextSink } from './sink.ts';

/** XOR checksum of the sentence body (without '$' and '*'), as two upper-case hex digits. */
export function nmeaChecksum(body: string): string {
  let x = 0;
  for (let i = 0; i < body.length; i++) x ^= body.charCodeAt(i);
  return x.toString(16).toUpperCase().padStart(2, '0');
}

export function sentence(body: string): string {
  return `$${body}*${nmeaChecksum(body)}\r\n`;
}

const pad = (v: number, n: number) => String(v).padStart(n, '0');

/** ddmm.mmmmmmm / dddmm.mmmmmmm and hemisphere. */
export function nmeaAngle(deg: number, lonDigits: boolean): [string, string] {
  const hemi = lonDigits ? (deg < 0 ? 'W' : 'E') : deg < 0 ? 'S' : 'N';
  const a = Math.abs(deg);
  let d = Math.floor(a);
  let minutes = Number(((a - d) * 60).toFixed(7));
  if (minutes >= 60) {
    d += 1;
    minutes -= 60;
  }
  const m = minutes.toFixed(7).padStart(10, '0');
  return [`${pad(d, lonDigits ? 3 : 2)}${m}`, hemi];
}

/** hhmmss.ss and ddmmyy (UTC) of an epoch time, rounded to centiseconds. */
export function nmeaTime(tEpoch: number): [string, string] {
  const cs = Math.round(tEpoch * 100);
  const date = new Date(Math.floor(cs / 100) * 1000);
  const hh = pad(date.getUTCHours(), 2), mm = pad(date.getUTCMinutes(), 2), ss = pad(date.getUTCSeconds(), 2);
  const frac = pad(((cs % 100) + 100) % 100, 2);
  const dmy = `${pad(date.getUTCDate(), 2)}${pad(date.getUTCMonth() + 1, 2)}${pad(date.getUTCFullYear() % 100, 2)}`;
  return [`${hh}${mm}${ss}.${frac}`, dmy];
}

/** GGA + RMC for epoch i of a GNSS block; epochs without a fix give quality 0 / status V with empty fields. */
export function nmeaEpoch(b: GnssBlock, i: number, geoidSeparationM: number): string {
  const [time, date] = nmeaTime(b.t[i]!);
  const fix = b.fix[i]!;
  const sats = pad(b.sats[i]!, 2);
  if (fix === 0) {
    return sentence(`GPGGA,${time},,,,,0,${sats},,,M,,M,,`) + sentence(`GPRMC,${time},V,,,,,,,${date},,,N`);
  }
  const [lat, ns] = nmeaAngle(b.lat[i]!, false);
  const [lon, ew] = nmeaAngle(b.lon[i]!, true);
  const msl = (b.alt[i]! - geoidSeparationM).toFixed(3);
  const knots = ((b.speed[i]! * 3600) / 1852).toFixed(3); // 1 kn = 1852/3600 m/s exactly
  const mode = fix === 1 ? 'A' : 'D';
  const age = fix === 1 ? '' : '1.0';
  const station = fix === 1 ? '' : '0007';
  return (
    sentence(`GPGGA,${time},${lat},${ns},${lon},${ew},${fix},${sats},${b.hdop[i]!.toFixed(2)},${msl},M,${geoidSeparationM.toFixed(1)},M,${age},${station}`) +
    sentence(`GPRMC,${time},A,${lat},${ns},${lon},${ew},${knots},${b.course[i]!.toFixed(1)},${date},,,${mode}`)
  );
}

export async function writeNmeaRows(sink: TextSink, b: GnssBlock, geoidSeparationM: number): Promise<void> {
  for (let i0 = 0; i0 < b.n; i0 += 2000) {
    let text = '';
    for (let i = i0; i < Math.min(b.n, i0 + 2000); i++) text += nmeaEpoch(b, i, geoidSeparationM);
    await sink.write(text);
  }
}
