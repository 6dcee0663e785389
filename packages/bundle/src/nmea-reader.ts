import type { GnssColumns } from './columns.ts';
import { forEachChunk, type ByteSource, type DecompressLimits } from './byte-source.ts';
import type { ReadStats } from './csv-reader.ts';
import type { ReadResult } from './csv-tables.ts';
import { BundleError } from './errors.ts';
import { DEFAULT_MAX_LINE_BYTES, LineSplitter } from './line-splitter.ts';
import { ByteNumberParser, NumberStatus } from './number-parser.ts';
import { GnssStore, rollover } from './gnss-store.ts';

export interface NmeaOptions extends DecompressLimits {
  file?: string;
  maxLineBytes?: number;
  /** Reject when bad sentences exceed this fraction of sentence lines. Default 0.01. */
  maxBadFraction?: number;
  maxIssues?: number;
}

const MAX_FIELDS = 40;

/**
 * Streaming NMEA 0183 reader for GGA (position, fix quality, satellites, HDOP, altitude), RMC (date) and GST
 * (position error sigmas) from any talker (GP, GN, GL, GA, ...). Each sentence's checksum — XOR of the bytes between
 * `$` and `*`, two hex digits after `*` — is verified; a mismatch is a bad line located at the checksum.
 * Times: GGA hhmmss.ss (UTC) plus the date of the latest RMC gives epoch seconds; GGAs before the first RMC take
 * its date, with a ±12 h rule across midnight. Ellipsoidal height = GGA altitude above MSL + geoid separation
 * (separation taken as 0 when empty). GGAs without a position (quality 0, empty fields) are skipped; a file
 * without any position gives empty columns.
 * Source: NMEA 0183 sentence layouts as given by widely reproduced reference guides (from memory).
 */
export class NmeaParser {
  private readonly file: string;
  private readonly maxBadFraction: number;
  private readonly maxIssues: number;
  private readonly splitter: LineSplitter;
  private readonly num = new ByteNumberParser();
  private readonly fs = new Int32Array(MAX_FIELDS);
  private readonly fe = new Int32Array(MAX_FIELDS);
  private nf = 0;
  private readonly store = new GnssStore();
  private sentences = 0;
  /** epoch seconds of 00:00 UTC of the latest RMC date, NaN before the first */
  private dayEpoch = Number.NaN;
  private rmcTod = 0;
  private readonly stats: ReadStats;
  private readonly ignored = new Set<string>();

  constructor(options: NmeaOptions = {}) {
    this.file = options.file ?? 'gnss.nmea';
    this.maxBadFraction = options.maxBadFraction ?? 0.01;
    this.maxIssues = options.maxIssues ?? 10;
    this.stats = { file: this.file, lines: 0, samples: 0, badLines: 0, nonFinite: 0, firstErrors: [], extraColumns: [] };
    this.splitter = new LineSplitter(this.file, options.maxLineBytes ?? DEFAULT_MAX_LINE_BYTES, (b, s, e, no) => this.onLine(b, s, e, no));
  }

  push(chunk: Uint8Array): void {
    this.splitter.push(chunk);
  }

  finish(): { columns: GnssColumns; stats: ReadStats } {
    this.splitter.end();
    const stats = this.stats;
    stats.lines = this.splitter.lines;
    stats.extraColumns = [...this.ignored].sort();
    for (const line of this.store.dropNonIncreasing()) this.bad(line, 1, 'time goes backwards');
    if (stats.badLines > 0 && stats.badLines > this.maxBadFraction * this.sentences) {
      const first = stats.firstErrors[0];
      throw new BundleError('NMEA_TOO_MANY_BAD_LINES', `${stats.badLines} of ${this.sentences} sentences bad${first ? `; first: ${first.message}` : ''}`, {
        file: this.file, line: first?.line ?? null, column: first?.column ?? null, issues: stats.firstErrors,
      });
    }
    // no fix at all (indoors all shift) is a run without GNSS; fixes without any date cannot be placed in time
    if (this.store.n > 0 && Number.isNaN(this.dayEpoch)) throw new BundleError('NMEA_NO_DATE', 'GGA sentences but no RMC with a date; cannot form epoch times', { file: this.file });
    const columns = this.store.columns();
    stats.samples = columns.n;
    return { columns, stats };
  }

  private onLine(buf: Buffer, start: number, end: number, lineNo: number): void {
    let s = start;
    while (s < end && (buf[s] === 32 || buf[s] === 9)) s++;
    if (s === end) return;
    this.sentences++;
    if (buf[s] !== 36) return this.bad(lineNo, s - start + 1, 'expected "$" at the start of a sentence');
    let star = -1;
    let sum = 0;
    for (let i = s + 1; i < end; i++) {
      const c = buf[i]!;
      if (c === 42) {
        star = i;
        break;
      }
      sum ^= c;
    }
    if (star < 0) return this.bad(lineNo, end - start + 1, 'expected "*" and a two-digit hex checksum');
    const given = hexByte(buf, star + 1, end);
    if (given < 0) return this.bad(lineNo, star - start + 2, 'expected two hex digits after "*"');
    if (given !== sum) {
      return this.bad(lineNo, star - start + 2, `checksum mismatch: computed ${hex2(sum)}, sentence has ${hex2(given)}`);
    }
    this.split(buf, s + 1, star);
    const addrLen = this.fe[0]! - this.fs[0]!;
    if (addrLen < 3 || buf[s + 1] === 80 /* P: proprietary */) {
      this.ignore(buf, s + 1, this.fe[0]!);
      return;
    }
    const t0 = this.fe[0]! - 3;
    const kind = (buf[t0]! << 16) | (buf[t0 + 1]! << 8) | buf[t0 + 2]!;
    const problem = kind === GGA ? this.gga(buf) : kind === RMC ? this.rmc(buf) : kind === GST ? this.gst(buf) : this.ignore(buf, s + 1, this.fe[0]!);
    if (problem !== null) this.bad(lineNo, this.fs[problem.field]! - start + 1, problem.message);
  }

  private split(buf: Buffer, start: number, end: number): void {
    let nf = 0;
    let fs = start;
    for (let i = start; i <= end && nf < MAX_FIELDS; i++) {
      if (i === end || buf[i] === 44) {
        this.fs[nf] = fs;
        this.fe[nf] = i;
        nf++;
        fs = i + 1;
      }
    }
    for (let k = nf; k < MAX_FIELDS; k++) this.fs[k] = this.fe[k] = end;
    this.nf = nf;
  }

  private gga(buf: Buffer): FieldProblem | null {
    if (this.nf < 12) return { field: this.nf - 1, message: `GGA needs at least 12 fields, found ${this.nf - 1}` };
    if (this.fs[2] === this.fe[2] || this.fs[4] === this.fe[4]) return null; // no position yet
    const tod = this.timeOfDay(buf, 1);
    if (tod < 0) return { field: 1, message: 'expected UTC time hhmmss.ss' };
    const lat = this.angle(buf, 2, 3, 78, 83);
    if (Number.isNaN(lat)) return { field: 2, message: 'expected latitude ddmm.mmmm and N or S' };
    const lon = this.angle(buf, 4, 5, 69, 87);
    if (Number.isNaN(lon)) return { field: 4, message: 'expected longitude dddmm.mmmm and E or W' };
    const fix = this.number(buf, 6);
    if (!Number.isInteger(fix) || fix < 0 || fix > 9) return { field: 6, message: 'expected fix quality 0..9' };
    const sats = this.number(buf, 7);
    const hdop = this.number(buf, 8);
    const msl = this.number(buf, 9);
    const sep = this.number(buf, 11);
    if (this.num.status === NumberStatus.Invalid) return { field: 11, message: 'expected geoid separation in metres' };
    const alt = msl + (Number.isNaN(sep) ? 0 : sep);
    const t = Number.isNaN(this.dayEpoch) ? tod : this.dayEpoch + tod + rollover(tod, this.rmcTod);
    this.store.push(t, lat, lon, alt, fix, hdop, sats, tod, this.splitter.lines);
    return null;
  }

  private rmc(buf: Buffer): FieldProblem | null {
    if (this.nf < 10) return { field: this.nf - 1, message: `RMC needs at least 10 fields, found ${this.nf - 1}` };
    const tod = this.timeOfDay(buf, 1);
    if (tod < 0) return { field: 1, message: 'expected UTC time hhmmss.ss' };
    const day = this.date(buf, 9);
    if (Number.isNaN(day)) return { field: 9, message: 'expected date ddmmyy' };
    const first = Number.isNaN(this.dayEpoch);
    this.dayEpoch = day;
    this.rmcTod = tod;
    if (first) this.store.dateUndated(day, tod);
    return null;
  }

  /** GST: sigmas of latitude, longitude, altitude error (m) in fields 6, 7, 8; matched to the GGA of the same time. */
  private gst(buf: Buffer): FieldProblem | null {
    if (this.nf < 9) return { field: this.nf - 1, message: `GST needs 8 fields, found ${this.nf - 1}` };
    const tod = this.timeOfDay(buf, 1);
    if (tod < 0) return { field: 1, message: 'expected UTC time hhmmss.ss' };
    const sLat = this.number(buf, 6), sLon = this.number(buf, 7), sAlt = this.number(buf, 8);
    // per-axis horizontal sigma: RMS of the latitude and longitude sigmas
    this.store.setAccuracy(tod, Math.sqrt((sLat * sLat + sLon * sLon) / 2), sAlt);
    return null;
  }

  private ignore(buf: Buffer, start: number, end: number): null {
    if (this.ignored.size < 32) this.ignored.add(buf.toString('latin1', start, end));
    return null;
  }

  private number(buf: Buffer, k: number): number {
    const v = this.num.parse(buf, this.fs[k]!, this.fe[k]!);
    return this.num.status === NumberStatus.Ok && this.num.next === this.fe[k] ? v : Number.NaN;
  }

  /** hhmmss[.sss] -> seconds of day, or -1. */
  private timeOfDay(buf: Buffer, k: number): number {
    const s = this.fs[k]!, e = this.fe[k]!;
    if (e - s < 6) return -1;
    const hh = twoDigits(buf, s), mm = twoDigits(buf, s + 2);
    const ss = this.num.parse(buf, s + 4, e);
    if (hh < 0 || hh > 23 || mm < 0 || mm > 59 || this.num.status !== NumberStatus.Ok || this.num.next !== e || ss < 0 || ss >= 61) return -1;
    return hh * 3600 + mm * 60 + ss;
  }

  /** (d)ddmm.mmmm + hemisphere -> signed degrees, or NaN. `pos`/`neg` are the hemisphere letters. */
  private angle(buf: Buffer, k: number, h: number, pos: number, neg: number): number {
    const s = this.fs[k]!, e = this.fe[k]!;
    let dot = s;
    while (dot < e && buf[dot] !== 46) dot++;
    if (dot - s < 3) return Number.NaN;
    const deg = this.num.parse(buf, s, dot - 2);
    if (this.num.status !== NumberStatus.Ok || this.num.next !== dot - 2) return Number.NaN;
    const min = this.num.parse(buf, dot - 2, e);
    if (this.num.status !== NumberStatus.Ok || this.num.next !== e || min >= 60) return Number.NaN;
    const hemi = this.fe[h]! - this.fs[h]! === 1 ? buf[this.fs[h]!] : -1;
    if (hemi !== pos && hemi !== neg) return Number.NaN;
    const v = deg + min / 60;
    return hemi === neg ? -v : v;
  }

  /** ddmmyy -> epoch seconds of 00:00 UTC, or NaN. Two-digit years: 80..99 -> 19xx, else 20xx (common practice). */
  private date(buf: Buffer, k: number): number {
    const s = this.fs[k]!;
    if (this.fe[k]! - s !== 6) return Number.NaN;
    const d = twoDigits(buf, s), m = twoDigits(buf, s + 2), y = twoDigits(buf, s + 4);
    if (d < 1 || d > 31 || m < 1 || m > 12 || y < 0) return Number.NaN;
    return Date.UTC(y >= 80 ? 1900 + y : 2000 + y, m - 1, d) / 1000;
  }

  private bad(line: number, column: number, message: string): void {
    this.stats.badLines++;
    if (this.stats.firstErrors.length < this.maxIssues) this.stats.firstErrors.push({ line, column, message });
  }
}

interface FieldProblem {
  field: number;
  message: string;
}

const code3 = (s: string) => (s.charCodeAt(0) << 16) | (s.charCodeAt(1) << 8) | s.charCodeAt(2);
const GGA = code3('GGA');
const RMC = code3('RMC');
const GST = code3('GST');

function twoDigits(buf: Uint8Array, i: number): number {
  const a = buf[i]! - 48, b = buf[i + 1]! - 48;
  return a >= 0 && a <= 9 && b >= 0 && b <= 9 ? a * 10 + b : -1;
}

function hexDigit(c: number): number {
  if (c >= 48 && c <= 57) return c - 48;
  c |= 32;
  return c >= 97 && c <= 102 ? c - 87 : -1;
}

/** Two hex digits at i (followed only by blanks), or -1. */
function hexByte(buf: Uint8Array, i: number, end: number): number {
  if (end - i < 2) return -1;
  const hi = hexDigit(buf[i]!), lo = hexDigit(buf[i + 1]!);
  for (let k = i + 2; k < end; k++) if (buf[k] !== 32 && buf[k] !== 9) return -1;
  return hi < 0 || lo < 0 ? -1 : hi * 16 + lo;
}

const hex2 = (v: number) => `0x${v.toString(16).toUpperCase().padStart(2, '0')}`;

/** Reads gnss.nmea (or .nmea.gz) into GNSS columns; see NmeaParser for the conventions. */
export async function readGnssNmea(source: ByteSource, options: NmeaOptions = {}): Promise<ReadResult<GnssColumns>> {
  const file = options.file ?? (typeof source === 'string' ? source : 'gnss.nmea');
  const parser = new NmeaParser({ ...options, file });
  await forEachChunk(source, file, (c) => parser.push(c), options);
  return parser.finish();
}
