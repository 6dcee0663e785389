import { BundleError } from './errors.ts';

/** Called once per line with the bytes [start, end) of `buf` (line terminator and trailing CR removed). */
export type LineHandler = (buf: Buffer, start: number, end: number, lineNo: number) => void;

export const DEFAULT_MAX_LINE_BYTES = 64 * 1024;

/**
 * Splits a byte stream into lines across chunk boundaries. Lines wholly inside a chunk are handed over in place;
 * only a line that straddles chunks is copied into one reusable carry buffer. LF and CRLF endings; the last line
 * may lack its terminator. A line longer than `maxLineBytes` (counting a CR, not the LF) is an error naming the
 * file and line; it is detected without buffering more than `maxLineBytes`.
 */
export class LineSplitter {
  private carry: Buffer;
  private carryLen = 0;
  private lineNo = 0;

  constructor(
    private readonly file: string,
    private readonly maxLineBytes: number,
    private readonly onLine: LineHandler,
  ) {
    this.carry = Buffer.allocUnsafe(Math.min(maxLineBytes, 4096));
  }

  /** Number of lines handed out so far. */
  get lines(): number {
    return this.lineNo;
  }

  push(chunk: Uint8Array): void {
    const buf = Buffer.isBuffer(chunk) ? chunk : Buffer.from(chunk.buffer, chunk.byteOffset, chunk.byteLength);
    const len = buf.length;
    let pos = 0;
    if (this.carryLen > 0) {
      const nl = buf.indexOf(10);
      if (nl < 0) {
        this.appendCarry(buf, 0, len);
        return;
      }
      this.appendCarry(buf, 0, nl);
      this.emit(this.carry, 0, this.carryLen);
      this.carryLen = 0;
      pos = nl + 1;
    }
    while (pos < len) {
      const nl = buf.indexOf(10, pos);
      if (nl < 0) {
        this.appendCarry(buf, pos, len);
        return;
      }
      if (nl - pos > this.maxLineBytes) this.tooLong();
      this.emit(buf, pos, nl);
      pos = nl + 1;
    }
  }

  /** Flushes a last line without terminator. */
  end(): void {
    if (this.carryLen > 0) {
      this.emit(this.carry, 0, this.carryLen);
      this.carryLen = 0;
    }
  }

  private emit(buf: Buffer, start: number, end: number): void {
    this.lineNo++;
    if (end > start && buf[end - 1] === 13) end--;
    this.onLine(buf, start, end, this.lineNo);
  }

  private appendCarry(buf: Buffer, start: number, end: number): void {
    const need = this.carryLen + (end - start);
    if (need > this.maxLineBytes) this.tooLong();
    if (need > this.carry.length) {
      const grown = Buffer.allocUnsafe(Math.min(Math.max(need, this.carry.length * 2), this.maxLineBytes));
      this.carry.copy(grown, 0, 0, this.carryLen);
      this.carry = grown;
    }
    buf.copy(this.carry, this.carryLen, start, end);
    this.carryLen = need;
  }

  private tooLong(): never {
    throw new BundleError('LINE_TOO_LONG', `line longer than ${this.maxLineBytes} bytes`, {
      file: this.file,
      line: this.lineNo + 1,
      column: this.maxLineBytes + 1,
    });
  }
}
