/**
 * Property-based fuzzing of the bundle readers (CSV columns, NMEA 0183, run.json manifest) with fast-check:
 * for arbitrary bytes in arbitrary chunkings they either return or throw a BundleError, finish quickly, and every
 * reported position lies inside the input. Runs are bounded (numRuns) and seeded, so CI is repeatable; set
 * FUZZ_RUNS to fuzz longer locally.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { BundleError, CsvColumnParser, IMU_SPEC, NmeaParser, ODOMETRY_SPEC, parseManifest } from '@plumbline/bundle';
import { imuCsv, manifest, nmeaText, odometryCsv } from '../corpus/builders.ts';

const RUNS = Number(process.env.FUZZ_RUNS ?? 200);
const SEED = 20261202;
/** Small line limit so the long-line path is reached by short inputs. */
const MAX_LINE = 256;
/** A single parse of a few KiB must not take longer than this (a generous bound for 2 shared cores). */
const MAX_MS = 500;

/** Line lengths of the input (split at LF; a trailing CR counts, it is part of the line as stored). */
function lineBytes(bytes: Uint8Array): number[] {
  const out: number[] = [];
  let start = 0;
  for (let i = 0; i <= bytes.length; i++) {
    if (i === bytes.length || bytes[i] === 10) {
      out.push(i - start);
      start = i + 1;
    }
  }
  return out;
}

/** The error is a BundleError whose line/column (and those of its issues) lie inside the input. */
function checkError(err: unknown, bytes: Uint8Array): void {
  if (!(err instanceof BundleError)) throw new Error(`threw ${(err as Error)?.name}: ${(err as Error)?.message}`);
  const lines = lineBytes(bytes);
  const inside = (line: number | null, column: number | null, what: string) => {
    if (line === null) return;
    expect(Number.isInteger(line) && line >= 1 && line <= lines.length, `${what} line ${line} of ${lines.length}`).toBe(true);
    if (column === null) return;
    // Columns are byte offsets or field numbers, both at most one past the end of the line (LINE_TOO_LONG: limit + 1).
    const len = Math.max(lines[line - 1] ?? 0, err.code === 'LINE_TOO_LONG' ? MAX_LINE : 0);
    expect(Number.isInteger(column) && column >= 1 && column <= len + 2, `${what} column ${column} on a line of ${len} bytes (${err.message})`).toBe(true);
  };
  inside(err.line, err.column, err.code);
  for (const i of err.issues) inside(i.line, i.column, `${err.code} issue`);
}

/** Text mutations of a valid input: byte flips, deletions, insertions of tricky fragments, and raw bytes. */
function mutated(base: string): fc.Arbitrary<Uint8Array> {
  const enc = new TextEncoder();
  const baseBytes = enc.encode(base);
  const fragment = fc.constantFrom(',', '\n', '\r\n', 'nan', 'inf', '-', '1e309', '"', '#', '\u00ff', '\ufeff', '$', '*', '*ZZ', ',,,,', '9'.repeat(400), '\0');
  const edit = fc.record({ at: fc.nat(), del: fc.nat({ max: 8 }), ins: fc.oneof(fragment, fc.string({ maxLength: 8 }), fc.uint8Array({ maxLength: 8 }).map((b) => Buffer.from(b).toString('latin1'))) });
  return fc.oneof(
    { weight: 4, arbitrary: fc.array(edit, { minLength: 1, maxLength: 6 }).map((edits) => {
      let b = Buffer.from(baseBytes);
      for (const e of edits) {
        const at = e.at % (b.length + 1);
        b = Buffer.concat([b.subarray(0, at), Buffer.from(e.ins, 'latin1'), b.subarray(Math.min(b.length, at + e.del))]);
      }
      return new Uint8Array(b);
    }) },
    { weight: 1, arbitrary: fc.uint8Array({ maxLength: 2048 }) },
  );
}

/** Cuts `bytes` into chunks at arbitrary points (chunk boundaries inside lines and UTF-8 sequences). */
const chunking = fc.array(fc.integer({ min: 1, max: 97 }), { minLength: 1, maxLength: 8 });
function chunks(bytes: Uint8Array, sizes: number[]): Uint8Array[] {
  const out: Uint8Array[] = [];
  for (let i = 0, k = 0; i < bytes.length; k++) {
    const n = sizes[k % sizes.length]!;
    out.push(bytes.subarray(i, i + n));
    i += n;
  }
  return out;
}

function timed(f: () => void): void {
  const t0 = performance.now();
  f();
  expect(performance.now() - t0).toBeLessThan(MAX_MS);
}

describe('CSV reader fuzzing', () => {
  for (const [name, spec, text] of [['imu', IMU_SPEC, imuCsv(40)], ['odometry', ODOMETRY_SPEC, odometryCsv(30)]] as const) {
    it(`${name}.csv: returns columns or a located BundleError`, () => {
      fc.assert(
        fc.property(mutated(text), chunking, (bytes, sizes) => {
          timed(() => {
            const p = new CsvColumnParser(spec, { file: `${name}.csv`, maxLineBytes: MAX_LINE, rowsHint: 4 });
            try {
              for (const c of chunks(bytes, sizes)) p.push(c);
              const table = p.finish();
              for (const col of table.columns) expect(col.length).toBe(table.n);
              expect(table.n).toBeLessThanOrEqual(lineBytes(bytes).length);
            } catch (err) {
              checkError(err, bytes);
            }
          });
        }),
        { numRuns: RUNS, seed: SEED },
      );
    });
  }
});

describe('NMEA reader fuzzing', () => {
  it('gnss.nmea: returns fixes or a located BundleError', () => {
    fc.assert(
      fc.property(mutated(nmeaText(8)), chunking, (bytes, sizes) => {
        timed(() => {
          const p = new NmeaParser({ file: 'gnss.nmea', maxLineBytes: MAX_LINE });
          try {
            for (const c of chunks(bytes, sizes)) p.push(c);
            const { columns } = p.finish();
            expect(columns.t.length).toBeLessThanOrEqual(lineBytes(bytes).length);
            for (let i = 0; i < columns.t.length; i++) expect(Number.isFinite(columns.t[i]!)).toBe(true);
          } catch (err) {
            checkError(err, bytes);
          }
        });
      }),
      { numRuns: RUNS, seed: SEED },
    );
  });
});

describe('manifest reader fuzzing', () => {
  const text = JSON.stringify(manifest('fuzz-run', { gnss: { file: 'gnss.nmea' } }), null, 2);
  it('run.json: returns a manifest or a located BundleError', () => {
    fc.assert(
      fc.property(fc.oneof(mutated(text), fc.jsonValue().map((v) => new TextEncoder().encode(JSON.stringify(v, null, 1)))), (bytes) => {
        timed(() => {
          try {
            const m = parseManifest(bytes);
            expect(m.format).toBe('plumbline-run/1');
          } catch (err) {
            checkError(err, bytes);
          }
        });
      }),
      { numRuns: RUNS, seed: SEED },
    );
  });
});
