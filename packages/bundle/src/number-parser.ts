/**
 * Decimal number parsing straight from bytes, without building a string per field.
 *
 * Grammar: [+-] (digits [. digits*] | . digits) [(e|E) [+-] digits], or nan / inf / infinity (any case, optional sign).
 * Values with at most 2^53 as integer mantissa and a power-of-ten exponent within ±22 are converted with one
 * correctly rounded IEEE multiplication or division (both operands exact), which gives the correctly rounded
 * result (W. D. Clinger, "How to read floating point numbers accurately", PLDI 1990 — the "fast path").
 * Longer inputs, already validated against the grammar, fall back to the engine's own conversion, which is
 * correctly rounded too; this path allocates, but is rare for sensor data written with ≤ 15 significant digits.
 */

const POW10 = new Float64Array(23);
for (let i = 0, p = 1; i < 23; i++, p *= 10) POW10[i] = p;
const MANT_LIMIT = 2 ** 53;
const MANT_GUARD = (MANT_LIMIT - 9) / 10;

/** Outcome of the last parse: a finite number, nan/inf, not a number, or an empty field. */
export const NumberStatus = { Ok: 0, NonFinite: 1, Invalid: 2, Empty: 3 } as const;
export type NumberStatus = (typeof NumberStatus)[keyof typeof NumberStatus];

/** Reusable parser; `status` and `next` describe the last call (no allocation per call). */
export class ByteNumberParser {
  status: NumberStatus = NumberStatus.Ok;
  /** Index just after the parsed token and trailing blanks. */
  next = 0;

  /** Parses a number starting at `start` (leading blanks skipped); stops at the first byte that cannot continue it. */
  parse(buf: Uint8Array, start: number, end: number): number {
    let i = start;
    while (i < end && (buf[i] === 32 || buf[i] === 9)) i++;
    const tokenStart = i;
    let neg = false;
    let c = i < end ? buf[i]! : -1;
    if (c === 45 || c === 43) {
      neg = c === 45;
      i++;
      c = i < end ? buf[i]! : -1;
    }
    let mant = 0;
    let exp10 = 0;
    let digits = 0;
    let exact = true;
    // integer and fraction parts kept apart too, for long fixed-point inputs such as nanosecond timestamps
    let intPart = 0;
    let intExact = true;
    let fracStart = -1;
    let fracEnd = -1;
    let hasExp = false;
    while (c >= 48 && c <= 57) {
      if (mant <= MANT_GUARD) mant = mant * 10 + (c - 48);
      else exact = false;
      digits++;
      i++;
      c = i < end ? buf[i]! : -1;
    }
    if (c === 46) {
      intPart = mant;
      intExact = exact;
      i++;
      fracStart = i;
      c = i < end ? buf[i]! : -1;
      while (c >= 48 && c <= 57) {
        if (mant <= MANT_GUARD) {
          mant = mant * 10 + (c - 48);
          exp10--;
        } else exact = false;
        digits++;
        i++;
        c = i < end ? buf[i]! : -1;
      }
      fracEnd = i;
    }
    if (digits === 0) return this.special(buf, tokenStart, i, end, neg);
    if (c === 101 || c === 69) {
      hasExp = true;
      i++;
      c = i < end ? buf[i]! : -1;
      let eneg = false;
      if (c === 45 || c === 43) {
        eneg = c === 45;
        i++;
        c = i < end ? buf[i]! : -1;
      }
      let e = 0;
      let edigits = 0;
      while (c >= 48 && c <= 57) {
        if (e < 100000) e = e * 10 + (c - 48);
        edigits++;
        i++;
        c = i < end ? buf[i]! : -1;
      }
      if (edigits === 0) return this.fail(NumberStatus.Invalid, i);
      exp10 += eneg ? -e : e;
    }
    const tokenEnd = i;
    this.finish(buf, i, end);
    let v: number;
    if (exact && exp10 >= -22 && exp10 <= 22 && mant <= MANT_LIMIT) {
      v = exp10 >= 0 ? mant * POW10[exp10]! : mant / POW10[-exp10]!;
      if (neg) v = -v;
    } else if (!hasExp && intExact && fracEnd - fracStart <= 15 && fracEnd > fracStart && (v = sumParts(intPart, fractionDigits(buf, fracStart, fracEnd), fracEnd - fracStart)) === v) {
      if (neg) v = -v;
    } else {
      v = Number(latin1(buf, tokenStart, tokenEnd));
    }
    this.status = Number.isFinite(v) ? NumberStatus.Ok : NumberStatus.NonFinite;
    return v;
  }

  private special(buf: Uint8Array, tokenStart: number, i: number, end: number, neg: boolean): number {
    if (i >= end || buf[i] === 44) {
      // nothing but blanks (and maybe a sign) before the separator
      if (i === tokenStart) {
        this.status = NumberStatus.Empty;
        this.next = i;
        return Number.NaN;
      }
      return this.fail(NumberStatus.Invalid, i);
    }
    const n = matchWord(buf, i, end);
    if (n === 0) return this.fail(NumberStatus.Invalid, i);
    const word = n;
    this.finish(buf, i + (word >> 4), end);
    this.status = NumberStatus.NonFinite;
    if ((word & 15) === 1) return Number.NaN;
    return neg ? Number.NEGATIVE_INFINITY : Number.POSITIVE_INFINITY;
  }

  private finish(buf: Uint8Array, i: number, end: number): void {
    while (i < end && (buf[i] === 32 || buf[i] === 9)) i++;
    this.next = i;
  }

  private fail(status: NumberStatus, at: number): number {
    this.status = status;
    this.next = at;
    return Number.NaN;
  }
}

const F64 = new Float64Array(1);
const U32 = new Uint32Array(F64.buffer); // little-endian hosts: U32[1] holds sign, exponent, top mantissa bits

/** Spacing of doubles at positive finite x (the spacing above x when x is a power of two); 0 for 0. */
function ulpOf(x: number): number {
  if (x === 0) return 0;
  F64[0] = x;
  const e = (U32[1]! >>> 20) & 0x7ff;
  return e === 0 ? 2 ** -1074 : 2 ** (e - 1075);
}

/** The fraction digits [start, end) as an integer (at most 15 digits, so exact). */
function fractionDigits(buf: Uint8Array, start: number, end: number): number {
  let f = 0;
  for (let i = start; i < end; i++) f = f * 10 + (buf[i]! - 48);
  return f;
}

/**
 * A + F / 10^m for exact integers A, F ≤ 2^53 and m ≤ 22, correctly rounded, or NaN when that cannot be certified
 * cheaply. b = F / 10^m is one correctly rounded division; s = A + b with its exact rounding error from TwoSum
 * (D. E. Knuth, TAOCP vol. 2, §4.2.2). The exact value is s + err + (F/10^m − b) with |F/10^m − b| ≤ ulp(b)/2,
 * so s is the correctly rounded result whenever |err| + ulp(b)/2 is below half the spacing of doubles at s
 * (a quarter at a power of two, where the spacing below is half as large). Otherwise the caller falls back.
 */
function sumParts(a: number, f: number, m: number): number {
  const b = f / POW10[m]!;
  const s = a + b;
  const bb = s - a;
  const err = a - (s - bb) + (b - bb);
  F64[0] = s;
  const powerOfTwo = U32[0] === 0 && (U32[1]! & 0xfffff) === 0;
  const limit = ulpOf(s) * (powerOfTwo ? 0.25 : 0.5);
  return Math.abs(err) + ulpOf(b) * 0.5 < limit ? s : Number.NaN;
}

/** Returns (length << 4) | kind for nan (kind 1), inf / infinity (kind 2), or 0. Case-insensitive. */
function matchWord(buf: Uint8Array, i: number, end: number): number {
  if (lowerEq(buf, i, end, 'infinity')) return (8 << 4) | 2;
  if (lowerEq(buf, i, end, 'inf')) return (3 << 4) | 2;
  if (lowerEq(buf, i, end, 'nan')) return (3 << 4) | 1;
  return 0;
}

function lowerEq(buf: Uint8Array, i: number, end: number, word: string): boolean {
  if (end - i < word.length) return false;
  for (let k = 0; k < word.length; k++) {
    if ((buf[i + k]! | 32) !== word.charCodeAt(k)) return false;
  }
  // the word must not continue with a letter or digit ("info", "nan1")
  const after = i + word.length < end ? buf[i + word.length]! | 32 : -1;
  return !((after >= 97 && after <= 122) || (after >= 48 && after <= 57));
}

/** Decodes bytes as Latin-1 (one char per byte); used only for rare long numbers and error messages. */
export function latin1(buf: Uint8Array, start: number, end: number): string {
  return Buffer.from(buf.buffer, buf.byteOffset + start, Math.max(0, end - start)).toString('latin1');
}

/** Short printable excerpt of a field for error messages. */
export function excerpt(buf: Uint8Array, start: number, end: number, max = 24): string {
  let e = start;
  while (e < end && buf[e] !== 44) e++;
  const s = latin1(buf, start, Math.min(e, start + max)).replace(/[^\x20-\x7e]/g, '?');
  return e - start > max ? `${s}…` : s;
}
