import { describe, expect, it } from 'vitest';
import { fmtDistance, fmtDuration, fmtEstimate, fmtMeasured, fmtNum, fmtTimestamp } from './format.ts';

describe('fmtEstimate', () => {
  it('writes value ± sigma with the unit', () => {
    expect(fmtEstimate({ value: 1.0213, sigma: 0.0041, unit: '' })).toBe('1.02 ± 0.0041 ');
    expect(fmtEstimate({ value: 38.2, sigma: 2.5, unit: 'ms' })).toBe('38.2 ± 2.5 ms');
  });
  it('says not observable with the reason when there is no value', () => {
    expect(fmtEstimate({ value: null, sigma: null, unit: 'm/s²', reason: 'no acceleration excitation' })).toBe('not observable: no acceleration excitation');
  });
  it('writes each axis of a vector estimate', () => {
    expect(fmtEstimate({ value: [0.0012, -0.0008, 0.0021], sigma: [0.0002, 0.0002, 0.0003], unit: 'rad/s' })).toBe('(0.0012 ± 0.0002, -0.0008 ± 0.0002, 0.0021 ± 0.0003) rad/s');
  });
  it('omits ± when sigma is unknown', () => {
    expect(fmtEstimate({ value: 0.35, sigma: null, unit: 'deg' })).toBe('0.35 deg');
  });
});

describe('number, time and distance formats', () => {
  it('keeps three significant digits and switches to exponent for tiny values', () => {
    expect(fmtNum(12.3456)).toBe('12.3');
    expect(fmtNum(0.000123)).toBe('0.000123');
    expect(fmtNum(1.234e-7)).toBe('1.23e-7');
    expect(fmtNum(28800.4)).toBe('28800');
    expect(fmtNum(null)).toBe('—');
    expect(fmtNum(Number.NaN)).toBe('—');
  });
  it('formats run seconds as m:ss and h:mm:ss', () => {
    expect(fmtDuration(0)).toBe('0:00');
    expect(fmtDuration(754)).toBe('12:34');
    expect(fmtDuration(8 * 3600 + 5)).toBe('8:00:05');
    expect(fmtDuration(-65)).toBe('−1:05');
  });
  it('formats distances in m below 1 km and km above', () => {
    expect(fmtDistance(412.4)).toBe('412 m');
    expect(fmtDistance(29750)).toBe('29.75 km');
  });
  it('shows ISO 8601 instants in UTC to the minute', () => {
    expect(fmtTimestamp('2026-11-30T07:20:00+01:00')).toBe('2026-11-30 06:20 UTC');
    expect(fmtTimestamp(null)).toBe('—');
  });
  it('puts measured value and threshold side by side', () => {
    expect(fmtMeasured(6.1, 2, '%')).toBe('6.1 % · threshold 2 %');
    expect(fmtMeasured(null, 2, '%')).toBe('not measured · threshold 2 %');
  });
});
