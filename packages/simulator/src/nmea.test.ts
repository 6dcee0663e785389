import { describe, expect, it } from 'vitest';
import { nmeaAngle, nmeaChecksum, nmeaEpoch, nmeaTime } from './io/nmea.ts';
import { createGnssBlock } from './sensors/gnss.ts';
import { parseFault } from './fault-parse.ts';
import { makeRunSpec, validateRunSpec } from './spec.ts';

describe('NMEA 0183', () => {
  it('checksums of the widely reproduced GGA and RMC examples', () => {
    // Source: NMEA 0183 reference-guide examples (CHECK-VALUES.md; from memory, checksums re-derived): *47 and *6A.
    expect(nmeaChecksum('GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,')).toBe('47');
    expect(nmeaChecksum('GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W')).toBe('6A');
  });
  it('formats angles as ddmm.mmmm / dddmm.mmmm with hemisphere', () => {
    // Same example: 48.1173° N = 4807.038 N, 11.516667° E = 01131.000 E.
    expect(nmeaAngle(48.1173, false)).toEqual(['4807.0380000', 'N']);
    expect(nmeaAngle(11 + 31 / 60, true)).toEqual(['01131.0000000', 'E']);
    expect(nmeaAngle(-8.5, true)).toEqual(['00830.0000000', 'W']);
  });
  it('formats UTC time and date', () => {
    const t = Date.UTC(1994, 2, 23, 12, 35, 19) / 1000 + 0.25;
    expect(nmeaTime(t)).toEqual(['123519.25', '230394']);
  });
  it('writes a GGA whose MSL altitude plus separation gives back the ellipsoidal height, and 1 kn = 1852/3600 m/s', () => {
    const b = createGnssBlock(1);
    b.n = 1;
    b.t[0] = Date.UTC(2026, 2, 2, 8, 0, 0) / 1000;
    b.lat[0] = 47.4013;
    b.lon[0] = 8.5897;
    b.alt[0] = 431.25;
    b.fix[0] = 4;
    b.hdop[0] = 0.7;
    b.sats[0] = 16;
    b.speed[0] = 1852 / 3600;
    b.course[0] = 90;
    const [gga, rmc] = nmeaEpoch(b, 0, 47.3).trim().split('\r\n');
    const f = gga!.split(',');
    expect(f[6]).toBe('4');
    expect(Number(f[9]) + Number(f[11])).toBeCloseTo(431.25, 9);
    expect(rmc!.split(',')[7]).toBe('1.000');
    for (const s of [gga!, rmc!]) expect(s.slice(-2)).toBe(nmeaChecksum(s.slice(1, -3)));
  });
});

describe('fault syntax', () => {
  it('parses kind, variant, magnitude and interval', () => {
    expect(parseFault('scale-drift/step:8@90')).toEqual({ kind: 'scale-drift', variant: 'step', magnitude: 8, startS: 90 });
    expect(parseFault('imu-gap@40-42.5')).toEqual({ kind: 'imu-gap', magnitude: 0, startS: 40, endS: 42.5 });
    expect(() => parseFault('imu-gap@40')).toThrow(/interval/);
    expect(() => parseFault('units/kelvin')).toThrow(/variant/);
  });
});

describe('spec validation', () => {
  it('names the offending fault and field', () => {
    expect(() => validateRunSpec(makeRunSpec({ durationS: 30, faults: [{ kind: 'imu-gap', magnitude: 0, startS: 40, endS: 42 }] }))).toThrow(/faults\[0\] \(imu-gap\): time 40 s outside/);
    expect(() => validateRunSpec(makeRunSpec({ durationS: 5 }))).toThrow(/durationS 5/);
    expect(() => validateRunSpec(makeRunSpec({ scale: 0 }))).toThrow(/scale must be a positive/);
    expect(() => validateRunSpec(makeRunSpec())).not.toThrow();
  });
});
