import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { BundleError } from './errors.ts';
import { readGnssNmea } from './nmea-reader.ts';
import { chunked, enc, nmeaChecksum, nmeaText, sentence } from './test-fixtures.ts';

// NMEA 0183 reference guides — from memory; checksum re-derived (see /work/shared/CHECK-VALUES.md)
const GGA = '$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47';
const RMC = '$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A';

const read = (text: string, opts = {}) => readGnssNmea([enc(text)], { file: 'gnss.nmea', ...opts });

async function bundleError(fn: () => Promise<unknown>): Promise<BundleError> {
  try {
    await fn();
  } catch (err) {
    expect(err).toBeInstanceOf(BundleError);
    return err as BundleError;
  }
  throw new Error('expected a BundleError');
}

describe('reference sentences (NMEA 0183 reference guides — from memory; checksum re-derived)', () => {
  it('checksums are the XOR of the bytes between $ and *', () => {
    expect(nmeaChecksum(GGA.slice(1, GGA.indexOf('*')))).toBe('47');
    expect(nmeaChecksum(RMC.slice(1, RMC.indexOf('*')))).toBe('6A');
  });
  it('GGA + RMC decode to the published values', async () => {
    const { columns, stats } = await read(`${GGA}\r\n${RMC}\r\n`);
    expect(stats).toMatchObject({ samples: 1, badLines: 0 });
    // 4807.038 N = 48° + 7.038′ = 48.1173°; 01131.000 E = 11° 31′ = 11.516667° (tolerance: 1e-9° ≈ 0.1 mm)
    expect(columns.lat[0]).toBeCloseTo(48.1173, 9);
    expect(columns.lon[0]).toBeCloseTo(11 + 31 / 60, 9);
    expect(columns.fix[0]).toBe(1);
    expect(columns.sats[0]).toBe(8);
    expect(columns.hdop[0]).toBe(0.9);
    // 545.4 m above MSL + 46.9 m geoid separation = 592.3 m ellipsoidal height (float sum, 1e-9 m)
    expect(columns.alt[0]).toBeCloseTo(592.3, 9);
    // 12:35:19 UTC on 1994-03-23 (date from RMC 230394)
    expect(columns.t[0]).toBe(Date.UTC(1994, 2, 23, 12, 35, 19) / 1000);
    expect(columns.t[0]).toBe(764426119);
  });
});

describe('stream handling', () => {
  it('1-byte and 7-byte chunks give the same fixes as one chunk', async () => {
    const text = nmeaText();
    const whole = await read(text);
    expect(whole.columns.n).toBe(2);
    for (const size of [1, 7]) {
      const r = await readGnssNmea(chunked(enc(text), size), { file: 'gnss.nmea' });
      expect([...r.columns.t]).toEqual([...whole.columns.t]);
      expect([...r.columns.lat]).toEqual([...whole.columns.lat]);
      expect(r.stats).toEqual(whole.stats);
    }
  });
  it('any talker; southern and western hemispheres are negative; seconds fractions kept', async () => {
    const text = [sentence('GLGGA,000001.25,3351.000,S,07038.000,W,2,09,1.1,10.0,M,-20.0,M,,'), sentence('GARMC,000001.25,A,3351.000,S,07038.000,W,0,0,010126,,,A')].join('\n');
    const { columns } = await read(text);
    expect(columns.lat[0]).toBeCloseTo(-(33 + 51 / 60), 12);
    expect(columns.lon[0]).toBeCloseTo(-(70 + 38 / 60), 12);
    expect(columns.alt[0]).toBeCloseTo(-10, 12);
    expect(columns.t[0]).toBe(Date.UTC(2026, 0, 1, 0, 0, 1) / 1000 + 0.25);
  });
  it('GGAs before the first RMC take its date, across midnight', async () => {
    const text = [
      sentence('GPGGA,235959.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,'),
      sentence('GPGGA,000000.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,'),
      sentence('GPRMC,000000.00,A,4722.926,N,00832.472,E,0,0,301126,,,A'),
      sentence('GPGGA,000001.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,'),
    ].join('\n');
    const { columns } = await read(text);
    const midnight = Date.UTC(2026, 10, 30) / 1000;
    expect([...columns.t]).toEqual([midnight - 1, midnight, midnight + 1]);
  });
  it('GST sigmas fill the accuracies of the GGA of the same time', async () => {
    const text = [
      sentence('GNGGA,060000.00,4722.926,N,00832.472,E,4,14,0.7,362.5,M,49.5,M,1.0,0000'),
      sentence('GNGST,060000.00,0.5,0.02,0.01,45,0.03,0.04,0.08'),
      sentence('GNRMC,060000.00,A,4722.926,N,00832.472,E,0,0,301126,,,R'),
    ].join('\n');
    const { columns } = await read(text);
    expect(columns.hacc[0]).toBeCloseTo(Math.sqrt((0.03 ** 2 + 0.04 ** 2) / 2), 12);
    expect(columns.vacc[0]).toBe(0.08);
  });
  it('GGA without position is skipped; other sentences are listed, not counted as bad', async () => {
    const text = [sentence('GPGGA,060000.00,,,,,0,00,99.9,,M,,M,,'), sentence('GPGSV,1,1,00'), nmeaText()].join('\n');
    const { columns, stats } = await read(text);
    expect(columns.n).toBe(2);
    expect(stats.badLines).toBe(0);
    expect(stats.extraColumns).toEqual(['GPGSV']);
  });
});

describe('round trip (property)', () => {
  // common practice: format fixes as GGA/RMC the way receivers do (ddmm.mmmmm), read them back
  it('time, position, height, quality, satellites and HDOP come back as written', async () => {
    const fix = fc.record({
      sec: fc.integer({ min: 0, max: 86399 }),
      lat: fc.double({ min: -89.999, max: 89.999, noNaN: true }),
      lon: fc.double({ min: -179.999, max: 179.999, noNaN: true }),
      msl: fc.double({ min: -400, max: 8000, noNaN: true }),
      sep: fc.double({ min: -100, max: 100, noNaN: true }),
      q: fc.constantFrom(1, 2, 4, 5),
      sats: fc.integer({ min: 4, max: 40 }),
    });
    await fc.assert(
      fc.asyncProperty(fix, async (f) => {
        const hms = (s: number) => [Math.floor(s / 3600), Math.floor(s / 60) % 60, s % 60].map((v) => String(v).padStart(2, '0')).join('') + '.00';
        const dm = (deg: number, w: number) => {
          const a = Math.abs(deg);
          let d = Math.floor(a), m = ((a - d) * 60).toFixed(5);
          if (m === '60.00000') [d, m] = [d + 1, '0.00000']; // minutes rounded up to a whole degree
          return { text: `${String(d).padStart(w, '0')}${m.padStart(8, '0')}`, value: d + Number(m) / 60 };
        };
        const la = dm(f.lat, 2), lo = dm(f.lon, 3);
        const msl = f.msl.toFixed(3), sep = f.sep.toFixed(2);
        const gga = sentence(`GNGGA,${hms(f.sec)},${la.text},${f.lat < 0 ? 'S' : 'N'},${lo.text},${f.lon < 0 ? 'W' : 'E'},${f.q},${f.sats},0.8,${msl},M,${sep},M,,`);
        const rmc = sentence(`GNRMC,${hms(f.sec)},A,${la.text},N,${lo.text},E,0,0,150626,,,A`);
        const { columns } = await read(`${gga}\n${rmc}\n`);
        expect(columns.n).toBe(1);
        expect(columns.t[0]).toBe(Date.UTC(2026, 5, 15) / 1000 + f.sec);
        expect(columns.lat[0]).toBe(f.lat < 0 ? -la.value : la.value);
        expect(columns.lon[0]).toBe(f.lon < 0 ? -lo.value : lo.value);
        expect(columns.alt[0]).toBe(Number(msl) + Number(sep));
        expect([columns.fix[0], columns.sats[0], columns.hdop[0]]).toEqual([f.q, f.sats, 0.8]);
      }),
      { numRuns: 100 },
    );
  });
});

describe('malformed sentences', () => {
  const many = (k: number) => Array.from({ length: k }, (_, i) => {
    const s = String(i % 60).padStart(2, '0'), m = String(Math.floor(i / 60)).padStart(2, '0');
    return [sentence(`GPGGA,06${m}${s}.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,`), sentence(`GPRMC,06${m}${s}.00,A,4722.926,N,00832.472,E,0,0,301126,,,A`)].join('\n');
  }).join('\n');
  it('bad checksum is a bad line located at the checksum digits', async () => {
    const text = `${many(100)}\n${GGA.replace('*47', '*48')}\n`;
    const { stats } = await read(text);
    expect(stats.badLines).toBe(1);
    // column of the first checksum digit, just after '*'
    expect(stats.firstErrors[0]).toEqual({ line: 201, column: GGA.indexOf('*') + 2, message: 'checksum mismatch: computed 0x47, sentence has 0x48' });
  });
  it('missing checksum, garbage and a broken latitude are bad lines', async () => {
    const text = `${many(150)}\n${GGA.slice(0, -3)}\nhello\n${sentence('GPGGA,123519,48x7.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,')}\n`;
    const { stats } = await read(text);
    expect(stats.firstErrors.map((e) => [e.line, e.column])).toEqual([[301, 63], [302, 1], [303, 15]]); // end of line; '$'; start of the latitude field
  });
  it('too many bad sentences rejects the file', async () => {
    const e = await bundleError(() => read(`${GGA}\n${RMC}\n${RMC.replace('*6A', '*00')}\n`));
    expect(e).toMatchObject({ code: 'NMEA_TOO_MANY_BAD_LINES', file: 'gnss.nmea', line: 3 });
  });
  it('fixes without any RMC have no date: NMEA_NO_DATE; no fix at all gives empty columns', async () => {
    expect((await bundleError(() => read(`${GGA}\n`))).code).toBe('NMEA_NO_DATE');
    const none = await read(`${RMC}\n${sentence('GPGGA,123520,,,,,0,00,99.9,,M,,M,,')}\n`);
    expect(none.columns.n).toBe(0);
    expect(none.stats).toMatchObject({ samples: 0, badLines: 0 });
  });
  it('time going backwards is a bad line; a repeated epoch from a second talker is dropped quietly', async () => {
    const text = `${many(200)}\n${sentence('GNGGA,060319.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,')}\n${sentence('GPGGA,060001.00,4722.926,N,00832.472,E,1,08,0.9,360,M,49.5,M,,')}\n`;
    const { columns, stats } = await read(text);
    expect(columns.n).toBe(200);
    expect(stats.badLines).toBe(1);
    expect(stats.firstErrors[0]).toMatchObject({ line: 402, message: 'time goes backwards' });
  });
});
