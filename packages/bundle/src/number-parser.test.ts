import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ByteNumberParser, NumberStatus } from './number-parser.ts';
import { enc } from './test-fixtures.ts';

const parser = new ByteNumberParser();
function parse(s: string): { v: number; status: NumberStatus; next: number } {
  const b = enc(s);
  const v = parser.parse(b, 0, b.length);
  return { v, status: parser.status, next: parser.next };
}

describe('ByteNumberParser on hand-picked tokens', () => {
  it('parses integers, fractions, signs and exponents exactly', () => {
    // expected values are the engine's own correctly rounded conversion (ECMA-262 StringToNumber)
    for (const s of ['0', '7', '-12', '+2.5', '.5', '5.', '0.1', '1e3', '1E-3', '-1.25e+2', '9.80665', '1796000000.0025', '00012.50']) {
      const r = parse(s);
      expect(r.status, s).toBe(NumberStatus.Ok);
      expect(r.v, s).toBe(Number(s));
      expect(r.next, s).toBe(s.length);
    }
  });
  it('keeps the sign of negative zero', () => {
    expect(Object.is(parse('-0').v, -0)).toBe(true);
    expect(Object.is(parse('-0.0e5').v, -0)).toBe(true);
  });
  it('reads nan, inf and infinity in any case as non-finite', () => {
    expect(parse('nan')).toMatchObject({ status: NumberStatus.NonFinite });
    expect(Number.isNaN(parse('NaN').v)).toBe(true);
    expect(parse('-inf').v).toBe(Number.NEGATIVE_INFINITY);
    expect(parse('Infinity').v).toBe(Number.POSITIVE_INFINITY);
    expect(parse('1e400').v).toBe(Number.POSITIVE_INFINITY);
    expect(parse('1e400').status).toBe(NumberStatus.NonFinite);
  });
  it('rejects malformed tokens and stops at the first byte that cannot continue a number', () => {
    for (const s of ['abc', '-', '.', 'e5', '1e', '1e+', 'info', 'nan1', '--1']) {
      expect(parse(s).status, s).toBe(NumberStatus.Invalid);
    }
    expect(parse('1.2.3')).toMatchObject({ status: NumberStatus.Ok, v: 1.2, next: 3 });
    expect(parse('12x')).toMatchObject({ v: 12, next: 2 });
  });
  it('reports an empty field and skips blanks around a number', () => {
    expect(parse('').status).toBe(NumberStatus.Empty);
    expect(parse('  ').status).toBe(NumberStatus.Empty);
    expect(parse(' \t3.5  ')).toMatchObject({ v: 3.5, next: 7 });
  });
});

describe('ByteNumberParser round trip (property)', () => {
  // Every finite double printed by the engine must read back as the same double the engine itself reads
  // (ECMA-262 Number::toString and StringToNumber are exact/correctly rounded). Common practice for parser tests.
  const finite = fc.double({ noNaN: true, noDefaultInfinity: true });
  it('toString, toExponential() and toPrecision(17) read back bit-exactly', () => {
    fc.assert(
      fc.property(finite, (x) => {
        for (const s of [x.toString(), x.toExponential(), x.toPrecision(17), x.toPrecision(9)]) {
          expect(Object.is(parse(s).v, Number(s)), s).toBe(true);
        }
        expect(Object.is(parse(x.toString()).v, Object.is(x, -0) ? 0 : x)).toBe(true);
      }),
      { numRuns: 300 },
    );
  });
  it('toFixed and toExponential with any digit count read back as the engine reads them', () => {
    fc.assert(
      fc.property(fc.double({ min: -1e20, max: 1e20, noNaN: true }), fc.integer({ min: 0, max: 20 }), (x, d) => {
        for (const s of [x.toFixed(d), x.toExponential(d)]) {
          expect(Object.is(parse(s).v, Number(s)), s).toBe(true);
        }
      }),
      { numRuns: 300 },
    );
  });
  it('long fixed-point values (integer part + up to 15 fraction digits, e.g. ns timestamps) are correctly rounded', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 2 ** 53 }), fc.integer({ min: 1, max: 15 }), fc.nat(), fc.boolean(), (a, m, f, neg) => {
        const s = `${neg ? '-' : ''}${a}.${String(f % 10 ** m).padStart(m, '0')}`;
        expect(Object.is(parse(s).v, Number(s)), s).toBe(true);
      }),
      { numRuns: 300 },
    );
    for (const s of ['1796000000.123456789', '1796000000.000000001', '4503599627370495.5', '9007199254740991.999999999999999']) {
      expect(parse(s).v, s).toBe(Number(s));
    }
  });
  it('short decimals (fast path) are exact: k-digit integers scaled by 10^-e', () => {
    fc.assert(
      fc.property(fc.integer({ min: -(2 ** 52), max: 2 ** 52 }), fc.integer({ min: 0, max: 22 }), (m, e) => {
        const s = `${m}e-${e}`;
        expect(parse(s).v).toBe(Number(s));
      }),
      { numRuns: 300 },
    );
  });
});
