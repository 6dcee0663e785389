/**
 * Returns the index of the first byte in [start, end) that breaks UTF-8 well-formedness (RFC 3629: no overlongs,
 * no surrogates, nothing above U+10FFFF), or -1 when the range is valid.
 */
export function firstInvalidUtf8(buf: Uint8Array, start: number, end: number): number {
  let i = start;
  while (i < end) {
    const b = buf[i]!;
    if (b < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let lo = 0x80;
    let hi = 0xbf;
    if (b >= 0xc2 && b <= 0xdf) need = 1;
    else if (b >= 0xe0 && b <= 0xef) {
      need = 2;
      if (b === 0xe0) lo = 0xa0;
      if (b === 0xed) hi = 0x9f;
    } else if (b >= 0xf0 && b <= 0xf4) {
      need = 3;
      if (b === 0xf0) lo = 0x90;
      if (b === 0xf4) hi = 0x8f;
    } else return i;
    if (i + need >= end) return i;
    const b1 = buf[i + 1]!;
    if (b1 < lo || b1 > hi) return i;
    for (let k = 2; k <= need; k++) {
      const bk = buf[i + k]!;
      if (bk < 0x80 || bk > 0xbf) return i;
    }
    i += need + 1;
  }
  return -1;
}
