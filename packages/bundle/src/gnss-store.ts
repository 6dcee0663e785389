import type { GnssColumns } from './columns.ts';

const DAY_S = 86400;

/** Seconds to add to a time of day so it lies within ±12 h of the reference time of day (midnight rollover). */
export function rollover(tod: number, refTod: number): number {
  if (tod - refTod > DAY_S / 2) return -DAY_S;
  if (refTod - tod > DAY_S / 2) return DAY_S;
  return 0;
}

const NAMES = ['t', 'lat', 'lon', 'alt', 'fix', 'hacc', 'vacc', 'hdop', 'sats', 'tod', 'line'] as const;

/** Growable columnar store for GNSS fixes decoded from NMEA, with the time of day and source line of each row. */
export class GnssStore {
  n = 0;
  private cap = 1024;
  private cols: Float64Array[] = NAMES.map(() => new Float64Array(1024));

  push(t: number, lat: number, lon: number, alt: number, fix: number, hdop: number, sats: number, tod: number, line: number): void {
    if (this.n === this.cap) this.grow();
    const c = this.cols;
    const i = this.n++;
    c[0]![i] = t;
    c[1]![i] = lat;
    c[2]![i] = lon;
    c[3]![i] = alt;
    c[4]![i] = fix;
    c[5]![i] = Number.NaN;
    c[6]![i] = Number.NaN;
    c[7]![i] = hdop;
    c[8]![i] = sats;
    c[9]![i] = tod;
    c[10]![i] = line;
  }

  /** Gives every row so far (all undated) the date `dayEpoch` of the first RMC seen at `refTod`. */
  dateUndated(dayEpoch: number, refTod: number): void {
    const t = this.cols[0]!, tod = this.cols[9]!;
    for (let i = 0; i < this.n; i++) t[i] = dayEpoch + tod[i]! + rollover(tod[i]!, refTod);
  }

  /** Sets accuracies on the latest row with time of day `tod` (looking back a few rows only). */
  setAccuracy(tod: number, hacc: number, vacc: number): void {
    const todCol = this.cols[9]!;
    for (let i = this.n - 1; i >= 0 && i >= this.n - 4; i--) {
      if (todCol[i] === tod) {
        this.cols[5]![i] = hacc;
        this.cols[6]![i] = vacc;
        return;
      }
    }
  }

  /**
   * Keeps rows whose time increases strictly. Rows repeating the previous time (several talkers reporting the same
   * epoch) are dropped silently; rows going back in time are dropped and their source lines returned.
   */
  dropNonIncreasing(): number[] {
    const c = this.cols;
    const t = c[0]!;
    const backwards: number[] = [];
    let k = 0;
    for (let i = 0; i < this.n; i++) {
      if (k > 0 && t[i]! <= t[k - 1]!) {
        if (t[i]! < t[k - 1]!) backwards.push(c[10]![i]!);
        continue;
      }
      if (k !== i) for (const col of c) col[k] = col[i]!;
      k++;
    }
    this.n = k;
    return backwards;
  }

  columns(): GnssColumns {
    const s = this.cols.map((c) => c.subarray(0, this.n));
    return { n: this.n, t: s[0]!, lat: s[1]!, lon: s[2]!, alt: s[3]!, fix: s[4]!, hacc: s[5]!, vacc: s[6]!, hdop: s[7]!, sats: s[8]! };
  }

  private grow(): void {
    this.cap *= 2;
    this.cols = this.cols.map((c) => {
      const g = new Float64Array(this.cap);
      g.set(c);
      return g;
    });
  }
}
