import { BundleError, type BundleIssue } from './errors.ts';
import { DEFAULT_MAX_LINE_BYTES, LineSplitter } from './line-splitter.ts';
import { ByteNumberParser, excerpt, NumberStatus } from './number-parser.ts';
import { firstInvalidUtf8 } from './utf8.ts';

/** A column the reader fills. Optional columns absent from the file read as NaN (or are reported absent). */
export interface CsvColumnSpec {
  name: string;
  required: boolean;
}

/** A problem with an accepted-so-far row: `target` is the index into `columns` of the offending column. */
export interface RowProblem {
  target: number;
  message: string;
}

export interface CsvTableSpec {
  columns: readonly CsvColumnSpec[];
  /** Row check run after the row is parsed; may also normalise values in place. */
  validateRow?: (cols: readonly Float64Array[], i: number) => RowProblem | null;
  /** Fewest data rows a usable file has (fewer is CSV_NO_DATA). Default 1; 0 accepts a header-only file. */
  minRows?: number;
}

export interface CsvOptions {
  /** Name used in errors, normally the path inside the bundle. */
  file?: string;
  maxLineBytes?: number;
  /** Reject when bad lines (or non-finite rows) exceed this fraction of data lines. Default 0.01. */
  maxBadFraction?: number;
  /** How many located problems to keep. Default 10. */
  maxIssues?: number;
  /** Expected number of rows, to size the stores once. */
  rowsHint?: number;
  /** Allocate the column stores on SharedArrayBuffer, so another thread can read the columns without a copy. */
  sharedMemory?: boolean;
}

/** A zeroed column store of `length` values, on a SharedArrayBuffer when `shared`. */
export function columnStore(length: number, shared = false): Float64Array {
  return shared ? new Float64Array(new SharedArrayBuffer(length * Float64Array.BYTES_PER_ELEMENT)) : new Float64Array(length);
}

/** What a reader saw: physical lines, rows kept, lines skipped and why. */
export interface ReadStats {
  file: string;
  lines: number;
  samples: number;
  badLines: number;
  nonFinite: number;
  firstErrors: BundleIssue[];
  /** Header names that are not part of the format; their values are ignored. */
  extraColumns: string[];
}

export interface CsvTable {
  n: number;
  /** One array per spec column, length n; absent optional columns are NaN-filled. */
  columns: Float64Array[];
  present: boolean[];
  stats: ReadStats;
}

/**
 * Streaming CSV to columnar Float64Array parser. Push byte chunks, then `finish()`. The header (first line that is
 * neither blank nor a `#` comment) maps file columns to spec columns by name, in any order; numbers are parsed from
 * the bytes in place. No quoting: fields are numbers, extra columns are skipped up to the next comma.
 */
export class CsvColumnParser {
  private readonly file: string;
  private readonly maxBadFraction: number;
  private readonly maxIssues: number;
  private readonly splitter: LineSplitter;
  private readonly num = new ByteNumberParser();
  private readonly shared: boolean;
  private stores: Float64Array[];
  private capacity: number;
  private n = 0;
  private headerSeen = false;
  /** file column -> spec column, -1 for extra columns */
  private fieldTarget = new Int32Array(0);
  private targetField: number[] = [];
  private headerNames: string[] = [];
  private readonly stats: ReadStats;

  constructor(
    private readonly spec: CsvTableSpec,
    options: CsvOptions = {},
  ) {
    this.file = options.file ?? 'input.csv';
    this.maxBadFraction = options.maxBadFraction ?? 0.01;
    this.maxIssues = options.maxIssues ?? 10;
    this.capacity = Math.max(16, Math.ceil(options.rowsHint ?? 1024));
    this.shared = options.sharedMemory ?? false;
    this.stores = spec.columns.map(() => columnStore(this.capacity, this.shared));
    this.stats = { file: this.file, lines: 0, samples: 0, badLines: 0, nonFinite: 0, firstErrors: [], extraColumns: [] };
    this.splitter = new LineSplitter(this.file, options.maxLineBytes ?? DEFAULT_MAX_LINE_BYTES, (buf, s, e, no) =>
      this.onLine(buf, s, e, no),
    );
  }

  push(chunk: Uint8Array): void {
    this.splitter.push(chunk);
  }

  finish(): CsvTable {
    this.splitter.end();
    const stats = this.stats;
    stats.lines = this.splitter.lines;
    stats.samples = this.n;
    if (!this.headerSeen) throw new BundleError('CSV_EMPTY', 'no header line (file is empty or only comments)', { file: this.file, line: 1, column: 1 });
    const dataLines = this.n + stats.badLines + stats.nonFinite;
    this.reject(stats.badLines, dataLines, 'CSV_TOO_MANY_BAD_LINES', 'malformed');
    this.reject(stats.nonFinite, dataLines, 'CSV_TOO_MANY_NON_FINITE', 'non-finite (nan/inf)');
    const minRows = this.spec.minRows ?? 1;
    if (this.n < minRows) {
      const what = this.n === 0 ? 'header but no data rows' : `needs at least ${minRows} data rows, has ${this.n}`;
      throw new BundleError('CSV_NO_DATA', what, { file: this.file, line: stats.lines, column: 1 });
    }
    const present = this.spec.columns.map((_, k) => this.targetField[k] !== -1);
    const columns = this.stores.map((s) => s.subarray(0, this.n));
    return { n: this.n, columns, present, stats };
  }

  private reject(count: number, dataLines: number, code: 'CSV_TOO_MANY_BAD_LINES' | 'CSV_TOO_MANY_NON_FINITE', what: string): void {
    if (count === 0 || count <= this.maxBadFraction * dataLines) return;
    const first = this.stats.firstErrors.find((i) => (code === 'CSV_TOO_MANY_NON_FINITE') === i.message.startsWith('non-finite'));
    const pct = ((100 * count) / dataLines).toFixed(2);
    throw new BundleError(code, `${count} of ${dataLines} data lines ${what} (${pct} %, limit ${100 * this.maxBadFraction} %)${first ? `; first: ${first.message}` : ''}`, {
      file: this.file,
      line: first?.line ?? null,
      column: first?.column ?? null,
      issues: this.stats.firstErrors,
    });
  }

  private onLine(buf: Buffer, start: number, end: number, lineNo: number): void {
    let s = start;
    if (lineNo === 1 && end - s >= 3 && buf[s] === 0xef && buf[s + 1] === 0xbb && buf[s + 2] === 0xbf) s += 3;
    let f = s;
    while (f < end && (buf[f] === 32 || buf[f] === 9)) f++;
    if (f === end || buf[f] === 35) return; // blank line or # comment
    if (this.headerSeen) this.onRow(buf, s, end, lineNo);
    else this.onHeader(buf, s, end, lineNo);
  }

  private onHeader(buf: Buffer, start: number, end: number, lineNo: number): void {
    const bad = firstInvalidUtf8(buf, start, end);
    if (bad >= 0) {
      throw new BundleError('NOT_UTF8', 'header is not valid UTF-8', { file: this.file, line: lineNo, column: bad - start + 1 });
    }
    const names = buf.toString('utf8', start, end).split(',').map((h) => h.trim().replace(/^"(.*)"$/, '$1').toLowerCase());
    const specNames = this.spec.columns.map((c) => c.name);
    this.fieldTarget = new Int32Array(names.length);
    this.targetField = specNames.map(() => -1);
    for (let i = 0; i < names.length; i++) {
      const name = names[i]!;
      const k = specNames.indexOf(name);
      this.fieldTarget[i] = k;
      if (k < 0) {
        this.stats.extraColumns.push(name);
        continue;
      }
      if (this.targetField[k] !== -1) {
        throw new BundleError('CSV_BAD_HEADER', `column "${name}" appears twice`, { file: this.file, line: lineNo, column: i + 1 });
      }
      this.targetField[k] = i;
    }
    const missing = this.spec.columns.filter((c, k) => c.required && this.targetField[k] === -1).map((c) => c.name);
    if (missing.length > 0) {
      const firstUnknown = names.findIndex((_, i) => this.fieldTarget[i] === -1);
      const hint = firstUnknown >= 0 ? `; column ${firstUnknown + 1} "${names[firstUnknown]}" is not a known name` : '';
      throw new BundleError(
        'CSV_MISSING_COLUMN',
        `missing required column${missing.length > 1 ? 's' : ''} ${missing.join(', ')} (expected header ${specNames.join(',')})${hint}`,
        { file: this.file, line: lineNo, column: firstUnknown >= 0 ? firstUnknown + 1 : names.length + 1 },
      );
    }
    // absent optional columns read as NaN, also inside validateRow
    this.targetField.forEach((field, k) => field === -1 && this.stores[k]!.fill(Number.NaN));
    this.headerNames = names;
    this.headerSeen = true;
  }

  private onRow(buf: Buffer, start: number, end: number, lineNo: number): void {
    if (this.n === this.capacity) this.grow();
    const nf = this.fieldTarget.length;
    const map = this.fieldTarget;
    const num = this.num;
    const stores = this.stores;
    const columns = this.spec.columns;
    const row = this.n;
    let nonFiniteField = -1;
    let pos = start;
    let f = 0;
    for (;;) {
      if (f >= nf) return this.bad(lineNo, f + 1, `expected ${nf} fields, found more`);
      const target = map[f]!;
      if (target < 0) {
        while (pos < end && buf[pos] !== 44) pos++;
      } else {
        let v = num.parse(buf, pos, end);
        const st = num.status;
        if (st === NumberStatus.Invalid || (num.next < end && buf[num.next] !== 44)) {
          return this.bad(lineNo, f + 1, `expected a number in column "${this.headerNames[f]}", found "${excerpt(buf, pos, end)}"`);
        }
        if (st === NumberStatus.Empty) {
          if (columns[target]!.required) return this.bad(lineNo, f + 1, `expected a number in column "${this.headerNames[f]}", found an empty field`);
          v = Number.NaN;
        } else if (st === NumberStatus.NonFinite && columns[target]!.required && nonFiniteField < 0) {
          nonFiniteField = f;
        }
        stores[target]![row] = v;
        pos = num.next;
      }
      f++;
      if (pos >= end) break;
      pos++; // the comma
    }
    if (f < nf) return this.bad(lineNo, f + 1, `expected ${nf} fields, found ${f}`);
    if (nonFiniteField >= 0) {
      this.stats.nonFinite++;
      this.issue(lineNo, nonFiniteField + 1, `non-finite value in column "${this.headerNames[nonFiniteField]}"`);
      return;
    }
    const problem = this.spec.validateRow?.(stores, row);
    if (problem) return this.bad(lineNo, this.targetField[problem.target]! + 1, problem.message);
    this.n = row + 1;
  }

  private bad(line: number, column: number, message: string): void {
    this.stats.badLines++;
    this.issue(line, column, message);
  }

  private issue(line: number, column: number, message: string): void {
    if (this.stats.firstErrors.length < this.maxIssues) this.stats.firstErrors.push({ line, column, message });
  }

  private grow(): void {
    this.capacity *= 2;
    this.stores = this.stores.map((s, k) => {
      const g = columnStore(this.capacity, this.shared);
      g.set(s);
      if (this.targetField[k] === -1) g.fill(Number.NaN, s.length);
      return g;
    });
  }
}
