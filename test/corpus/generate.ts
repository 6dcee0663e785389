/**
 * The malformed-bundle corpus: every case is built here from code (no binary fixtures), deterministically, with the
 * outcome the service must give. Run `node --import tsx test/corpus/generate.ts <dir>` to write the bundles and
 * `cases.json` to a directory and print the table; test/reliability/corpus.test.ts feeds them through the API.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import { entriesOf, flipByte, imuCsv, manifest, noise, patchName, runFiles, tar, tarGz, zip, type FileMap } from './builders.ts';
import { csvCases } from './csv-cases.ts';

/** How the case reaches the server. */
export type Upload =
  | { via: 'post'; contentType?: string; role?: 'robot' | 'admin' }
  /** A resumable session driven through a scripted mistake (see corpus.test.ts). */
  | { via: 'session'; step: 'wrong-offset' | 'wrong-checksum' | 'past-size' | 'finish-early' | 'declared-over-limit' | 'other-robot' | 'manifest-mismatch' | 'bad-sha' };

export type Expect =
  /** Refused at upload with problem+json; `line`/`column` are checked when given, `located` requires both. */
  | { kind: 'problem'; status: number; code: string; bundle_code?: string; file?: string; line?: number; column?: number; located?: boolean }
  /** Stored, then rejected by the analysis with a located reason (audit entry `run.rejected`). */
  | { kind: 'rejected'; bundle_code: string; file: string; line?: number; column?: number }
  /** Valid input in an unusual shape: stored and analysed to `done`. */
  | { kind: 'done'; notVerdict?: 'sound' | 'doubtful' | 'unfit' };

export interface CorpusCase {
  id: string;
  class: string;
  what: string;
  upload: Upload;
  expect: Expect;
  bytes: Buffer;
}

/** Upload limit the corpus app is configured with (the over-limit case is just above it). */
export const CORPUS_MAX_UPLOAD_BYTES = 4 * 1024 * 1024;

type Def = Omit<CorpusCase, 'bytes'> & { build: (runId: string) => Promise<Buffer> | Buffer };

const post: Upload = { via: 'post' };
const p422 = (bundle_code: string, extra: Partial<Extract<Expect, { kind: 'problem' }>> = {}): Expect => ({ kind: 'problem', status: 422, code: 'BUNDLE_INVALID', bundle_code, ...extra });
const good = (id: string, extra: FileMap = {}) => tarGz(entriesOf({ ...runFiles(id), ...extra }));
const withManifestText = (id: string, text: string) => tarGz(entriesOf({ ...runFiles(id), 'run.json': text }));
const manifestText = (id: string, over: Record<string, unknown> = {}) => JSON.stringify(manifest(id, over), null, 2);
const zeros = (n: number) => Buffer.alloc(n);

function archiveCases(): Def[] {
  const c = 'archive';
  return [
    { id: 'gzip-truncated-half', class: c, what: 'tar.gz cut in the middle of the deflate stream', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => { const b = await good(id); return b.subarray(0, b.length >> 1); } },
    { id: 'gzip-header-only', class: c, what: 'only the 10-byte gzip header', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => (await good(id)).subarray(0, 10) },
    { id: 'gzip-bad-crc', class: c, what: 'gzip trailer CRC-32 flipped', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => flipByte(await good(id), -6) },
    { id: 'gzip-corrupt-deflate', class: c, what: 'a byte inside the deflate data flipped', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => flipByte(await good(id), 40) },
    { id: 'gzip-nested', class: c, what: 'tar.gz gzipped again (gzip inside gzip)', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => gzipSync(await good(id)) },
    { id: 'tar-truncated', class: c, what: 'plain tar cut inside an entry', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => { const b = await tar(entriesOf(runFiles(id))); return b.subarray(0, 2000); } },
    { id: 'tar-bad-header-checksum', class: c, what: 'tar header checksum field overwritten', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => { const b = await tar(entriesOf(runFiles(id))); b.write('0000000\0', 148, 'latin1'); return b; } },
    { id: 'zip-truncated', class: c, what: 'zip without its central directory', upload: post, expect: p422('ARCHIVE_CORRUPT'), build: async (id) => { const b = await zip(entriesOf(runFiles(id)).map((e) => ({ name: e.name, data: e.data! }))); return b.subarray(0, b.length - 200); } },
    { id: 'not-an-archive', class: c, what: '64 KiB of noise', upload: post, expect: p422('BUNDLE_UNSUPPORTED'), build: () => noise(64 * 1024) },
    { id: 'gzip-of-nothing', class: c, what: 'a valid gzip of zero bytes (an empty archive)', upload: post, expect: p422('FILE_MISSING', { file: 'run.json' }), build: () => gzipSync(Buffer.alloc(0)) },
    { id: 'empty-tar', class: c, what: 'a tar.gz with no entries', upload: post, expect: p422('FILE_MISSING', { file: 'run.json' }), build: () => tarGz([]) },
    { id: 'gzip-bomb-ratio', class: c, what: '64 MiB of zeros in a 64 KiB tar.gz (ratio ~1000:1)', upload: post, expect: p422('ARCHIVE_RATIO'), build: (id) => good(id, { 'padding.bin': zeros(64 * 1024 * 1024) }) },
    { id: 'zip-bomb-ratio', class: c, what: 'zip entry of 64 MiB zeros deflated to 64 KiB', upload: post, expect: p422('ARCHIVE_RATIO'), build: (id) => zip(entriesOf({ ...runFiles(id), 'padding.bin': zeros(64 * 1024 * 1024) }).map((e) => ({ name: e.name, data: e.data! }))) },
    {
      id: 'zip-bomb-nested', class: c, what: 'zip holding zips of zeros (nested bomb): inner archives are kept as plain files, never expanded', upload: post, expect: { kind: 'done' },
      build: async (id) => {
        const inner = await zip([{ name: 'z.bin', data: zeros(4 * 1024 * 1024) }]);
        const middle = await zip(Array.from({ length: 8 }, (_, i) => ({ name: `inner-${i}.zip`, data: inner, compress: false })));
        return zip([...entriesOf(runFiles(id)).map((e) => ({ name: e.name, data: e.data! })), { name: 'attachments/nested.zip', data: middle }]);
      },
    },
    { id: 'too-many-entries', class: c, what: '100 extra files (limit 64 entries)', upload: post, expect: p422('ARCHIVE_TOO_MANY_ENTRIES'), build: (id) => tarGz([...entriesOf(runFiles(id)), ...Array.from({ length: 100 }, (_, i) => ({ name: `extra/${i}.txt`, data: 'x' }))]) },
    { id: 'tar-character-device', class: c, what: 'a character-device entry', upload: post, expect: p422('ARCHIVE_ENTRY_TYPE'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'dev-null', type: 'character-device' }]) },
    { id: 'tar-fifo', class: c, what: 'a FIFO entry', upload: post, expect: p422('ARCHIVE_ENTRY_TYPE'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'pipe', type: 'fifo' }]) },
  ];
}

function pathCases(): Def[] {
  const c = 'paths-links';
  const zipWith = async (id: string, extra: { name: string; data: string; mode?: number }) =>
    zip([...entriesOf(runFiles(id)).map((e) => ({ name: e.name, data: e.data! })), extra]);
  return [
    { id: 'tar-dotdot', class: c, what: 'entry "../escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: '../escape.csv', data: 'x' }]) },
    { id: 'tar-dotdot-deep', class: c, what: 'entry "data/../../../escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'data/../../../escape.csv', data: 'x' }]) },
    { id: 'tar-absolute', class: c, what: 'entry "/tmp/plumbline-escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: '/tmp/plumbline-escape.csv', data: 'x' }]) },
    { id: 'tar-backslash', class: c, what: 'entry "..\\escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: '..\\escape.csv', data: 'x' }]) },
    { id: 'zip-dotdot', class: c, what: 'zip entry "../escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: async (id) => patchName(await zipWith(id, { name: 'xx/escape.csv', data: 'x' }), 'xx/escape.csv', '../escape.csv') },
    { id: 'zip-absolute', class: c, what: 'zip entry "/tmp/escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: async (id) => patchName(await zipWith(id, { name: 'tmp/escape.csv', data: 'x' }), 'tmp/escape.csv', '/mp/escape.csv') },
    { id: 'zip-drive-letter', class: c, what: 'zip entry "C:/escape.csv"', upload: post, expect: p422('ARCHIVE_PATH_TRAVERSAL'), build: async (id) => patchName(await zipWith(id, { name: 'Cx/escape.csv', data: 'x' }), 'Cx/escape.csv', 'C:/escape.csv') },
    { id: 'tar-symlink', class: c, what: 'imu.csv as a symlink to /etc/passwd', upload: post, expect: p422('ARCHIVE_LINK'), build: (id) => tarGz([...entriesOf(runFiles(id, { files: { 'imu.csv': null } })), { name: 'imu.csv', type: 'symlink', linkname: '/etc/passwd' }]) },
    { id: 'tar-symlink-dir', class: c, what: 'a directory symlink "data" -> "/"', upload: post, expect: p422('ARCHIVE_LINK'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'data', type: 'symlink', linkname: '/' }]) },
    { id: 'tar-hardlink', class: c, what: 'imu.csv as a hard link to /etc/passwd', upload: post, expect: p422('ARCHIVE_LINK'), build: (id) => tarGz([...entriesOf(runFiles(id, { files: { 'imu.csv': null } })), { name: 'imu.csv', type: 'link', linkname: '/etc/passwd' }]) },
    { id: 'zip-symlink', class: c, what: 'zip entry with symlink mode 0120777', upload: post, expect: p422('ARCHIVE_LINK'), build: (id) => zipWith(id, { name: 'link', data: '/etc/passwd', mode: 0o120777 }) },
    { id: 'tar-duplicate', class: c, what: 'run.json twice', upload: post, expect: p422('ARCHIVE_DUPLICATE'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'run.json', data: manifestText(id, { site: 'northgate-yard' }) }]) },
    { id: 'tar-duplicate-dot', class: c, what: '"imu.csv" and "./imu.csv"', upload: post, expect: p422('ARCHIVE_DUPLICATE'), build: (id) => tarGz([...entriesOf(runFiles(id)), { name: './imu.csv', data: imuCsv(10) }]) },
    { id: 'zip-duplicate', class: c, what: 'zip with imu.csv twice', upload: post, expect: p422('ARCHIVE_DUPLICATE'), build: (id) => zipWith(id, { name: 'imu.csv', data: imuCsv(10) }) },
  ];
}

function fileSetCases(): Def[] {
  const c = 'files';
  return [
    { id: 'missing-manifest', class: c, what: 'no run.json', upload: post, expect: p422('FILE_MISSING', { file: 'run.json' }), build: (id) => tarGz(entriesOf(runFiles(id, { files: { 'run.json': null } }))) },
    { id: 'missing-imu', class: c, what: 'run.json names imu.csv, absent', upload: post, expect: p422('FILE_MISSING', { file: 'imu.csv' }), build: (id) => tarGz(entriesOf(runFiles(id, { files: { 'imu.csv': null } }))) },
    { id: 'missing-odometry', class: c, what: 'run.json names odometry.csv, absent', upload: post, expect: p422('FILE_MISSING', { file: 'odometry.csv' }), build: (id) => tarGz(entriesOf(runFiles(id, { files: { 'odometry.csv': null } }))) },
    { id: 'missing-gnss', class: c, what: 'run.json names gnss.nmea, absent', upload: post, expect: p422('FILE_MISSING', { file: 'gnss.nmea' }), build: (id) => tarGz(entriesOf(runFiles(id, { manifest: { gnss: { file: 'gnss.nmea' } } }))) },
    { id: 'extra-files', class: c, what: 'README.txt and a photos/ directory besides the run (ignored)', upload: post, expect: { kind: 'done' }, build: (id) => tarGz([...entriesOf(runFiles(id)), { name: 'photos', type: 'directory' }, { name: 'photos/dock.jpg', data: noise(2048) }, { name: 'README.txt', data: 'shift notes' }]) },
    { id: 'single-top-directory', class: c, what: 'everything under one top-level directory', upload: post, expect: { kind: 'done' }, build: (id) => tarGz(entriesOf(runFiles(id), `${id}/`)) },
    { id: 'zip-valid', class: c, what: 'a valid zip bundle', upload: { via: 'post', contentType: 'application/zip' }, expect: { kind: 'done' }, build: (id) => zip(entriesOf(runFiles(id)).map((e) => ({ name: e.name, data: e.data! }))) },
    { id: 'plain-tar-valid', class: c, what: 'a valid uncompressed tar', upload: { via: 'post', contentType: 'application/x-tar' }, expect: { kind: 'done' }, build: (id) => tar(entriesOf(runFiles(id))) },
  ];
}

function manifestCases(): Def[] {
  const c = 'manifest';
  const m = (id: string, over: Record<string, unknown>) => withManifestText(id, manifestText(id, over));
  return [
    { id: 'manifest-syntax', class: c, what: 'comma missing after "robot_id"', upload: post, expect: p422('MANIFEST_SYNTAX', { file: 'run.json', line: 4, located: true }), build: (id) => withManifestText(id, manifestText(id).replace('"kestrel-01",', '"kestrel-01"')) },
    { id: 'manifest-trailing-comma', class: c, what: 'trailing comma before the closing brace', upload: post, expect: p422('MANIFEST_SYNTAX', { file: 'run.json', located: true }), build: (id) => withManifestText(id, manifestText(id).replace(/\n}$/, ',\n}')) },
    { id: 'manifest-empty', class: c, what: 'run.json of zero bytes', upload: post, expect: p422('MANIFEST_SYNTAX', { file: 'run.json' }), build: (id) => withManifestText(id, '') },
    { id: 'manifest-array', class: c, what: 'run.json is a JSON array', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', line: 1, located: true }), build: (id) => withManifestText(id, '[]') },
    { id: 'manifest-format-version', class: c, what: 'format "plumbline-run/2"', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', line: 2, located: true }), build: (id) => m(id, { format: 'plumbline-run/2' }) },
    { id: 'manifest-no-robot', class: c, what: 'robot_id missing', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { robot_id: undefined }) },
    { id: 'manifest-bad-run-id', class: c, what: 'run_id with spaces and a slash', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', line: 4, located: true }), build: (id) => m(id, { run_id: `${id} / x` }) },
    { id: 'manifest-bad-date', class: c, what: 'started_at "30/11/2026 06:00"', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', line: 6, located: true }), build: (id) => m(id, { started_at: '30/11/2026 06:00' }) },
    { id: 'manifest-extrinsic-not-unit', class: c, what: 'imu_T_odom rotation [2,0,0,0]', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { extrinsics: { imu_T_odom: { translation: [0, 0, 0], rotation_wxyz: [2, 0, 0, 0] } } }) },
    { id: 'manifest-unknown-field', class: c, what: 'an unknown top-level field', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { colour: 'teal' }) },
    { id: 'manifest-path-traversal', class: c, what: 'imu.file "../imu.csv"', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { imu: { file: '../imu.csv', rate_hz: 200 } }) },
    { id: 'manifest-wrong-type', class: c, what: 'imu.rate_hz as the string "200"', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { imu: { file: 'imu.csv', rate_hz: '200' } }) },
    { id: 'manifest-rate-in-mhz', class: c, what: 'wrong units: imu.rate_hz 200000 (mHz instead of Hz)', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => m(id, { imu: { file: 'imu.csv', rate_hz: 200000 } }) },
    { id: 'manifest-file-extension', class: c, what: 'imu.file "imu.txt"', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json', located: true }), build: (id) => tarGz(entriesOf({ ...runFiles(id, { manifest: { imu: { file: 'imu.txt', rate_hz: 200 } }, files: { 'imu.csv': null } }), 'imu.txt': imuCsv() })) },
    { id: 'manifest-not-utf8', class: c, what: 'a Latin-1 byte in the site name', upload: post, expect: p422('NOT_UTF8', { file: 'run.json', line: 5, located: true }), build: (id) => tarGz(entriesOf({ ...runFiles(id), 'run.json': Buffer.from(manifestText(id).replace('harbourside-depot', 'harbours\u00eede-depot'), 'latin1') })) },
    { id: 'manifest-too-large', class: c, what: 'run.json of 2 MiB (limit 1 MiB)', upload: post, expect: p422('MANIFEST_INVALID', { file: 'run.json' }), build: (id) => withManifestText(id, manifestText(id).replace('{', `{\n  "_pad": "${'x'.repeat(2 * 1024 * 1024)}",`)) },
    { id: 'manifest-other-robot', class: c, what: 'a kestrel-01 token uploading a bundle of plover-02', upload: post, expect: { kind: 'problem', status: 403, code: 'ROBOT_MISMATCH', file: 'run.json' }, build: (id) => m(id, { robot_id: 'plover-02' }) },
  ];
}

function uploadCases(): Def[] {
  const c = 'upload';
  const session = (step: Extract<Upload, { via: 'session' }>['step']): Upload => ({ via: 'session', step });
  return [
    { id: 'zero-bytes', class: c, what: 'an empty body', upload: post, expect: p422('BUNDLE_UNSUPPORTED'), build: () => Buffer.alloc(0) },
    { id: 'over-limit', class: c, what: '1 byte more than the upload limit', upload: post, expect: { kind: 'problem', status: 413, code: 'BODY_TOO_LARGE' }, build: () => noise(CORPUS_MAX_UPLOAD_BYTES + 1) },
    { id: 'wrong-content-type', class: c, what: 'a valid bundle sent as text/plain', upload: { via: 'post', contentType: 'text/plain' }, expect: { kind: 'problem', status: 415, code: 'UNSUPPORTED_MEDIA_TYPE' }, build: (id) => good(id) },
    { id: 'session-wrong-offset', class: c, what: 'first chunk sent at offset 100', upload: session('wrong-offset'), expect: { kind: 'problem', status: 409, code: 'UPLOAD_OFFSET_MISMATCH' }, build: (id) => good(id) },
    { id: 'session-wrong-checksum', class: c, what: 'all bytes sent, declared SHA-256 of other bytes', upload: session('wrong-checksum'), expect: { kind: 'problem', status: 422, code: 'CHECKSUM_MISMATCH' }, build: (id) => good(id) },
    { id: 'session-past-size', class: c, what: 'more bytes than the declared size', upload: session('past-size'), expect: { kind: 'problem', status: 413, code: 'BODY_TOO_LARGE' }, build: (id) => good(id) },
    { id: 'session-finish-early', class: c, what: 'finish with half the bytes', upload: session('finish-early'), expect: { kind: 'problem', status: 409, code: 'UPLOAD_INCOMPLETE' }, build: (id) => good(id) },
    { id: 'session-over-limit', class: c, what: 'declared size above the upload limit', upload: session('declared-over-limit'), expect: { kind: 'problem', status: 413, code: 'BODY_TOO_LARGE' }, build: (id) => good(id) },
    { id: 'session-other-robot', class: c, what: 'a kestrel-01 token opening a session for plover-02', upload: session('other-robot'), expect: { kind: 'problem', status: 403, code: 'ROBOT_MISMATCH' }, build: (id) => good(id) },
    { id: 'session-manifest-mismatch', class: c, what: 'session opened for run "other", bundle says another run id', upload: session('manifest-mismatch'), expect: { kind: 'problem', status: 422, code: 'BUNDLE_INVALID', file: 'run.json' }, build: (id) => good(id) },
    { id: 'session-bad-sha', class: c, what: 'declared sha256 that is not 64 hex digits', upload: session('bad-sha'), expect: { kind: 'problem', status: 400, code: 'VALIDATION_FAILED' }, build: (id) => good(id) },
  ];
}

/** All case definitions, in table order. */
export function corpusDefinitions(): Def[] {
  return [...archiveCases(), ...pathCases(), ...fileSetCases(), ...manifestCases(), ...csvCases(), ...uploadCases()];
}

/** Builds every case (bytes in memory). Run ids are `corpus-<case id>`, so accepted cases never collide. */
export async function buildCorpus(): Promise<CorpusCase[]> {
  const out: CorpusCase[] = [];
  for (const d of corpusDefinitions()) {
    const { build, ...rest } = d;
    out.push({ ...rest, bytes: await build(`corpus-${d.id}`) });
  }
  return out;
}

/** Writes `<id>.bin` per case and `cases.json` (the table without bytes) into `dir`. */
export async function writeCorpus(dir: string): Promise<CorpusCase[]> {
  const cases = await buildCorpus();
  await mkdir(dir, { recursive: true });
  for (const k of cases) await writeFile(join(dir, `${k.id}.bin`), k.bytes);
  await writeFile(join(dir, 'cases.json'), JSON.stringify(cases.map(({ bytes, ...k }) => ({ ...k, size_bytes: bytes.length })), null, 2));
  return cases;
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const dir = process.argv[2];
  if (!dir) {
    process.stderr.write('usage: node --import tsx test/corpus/generate.ts <output dir>\n');
    process.exit(2);
  }
  const cases = await writeCorpus(dir);
  for (const k of cases) {
    const e = k.expect;
    const outcome = e.kind === 'problem' ? `${e.status} ${e.code}${e.bundle_code ? `/${e.bundle_code}` : ''}` : e.kind === 'rejected' ? `rejected ${e.bundle_code}` : 'done';
    process.stdout.write(`${k.class.padEnd(12)} ${k.id.padEnd(30)} ${String(k.bytes.length).padStart(9)} B  ${outcome}\n`);
  }
  process.stdout.write(`${cases.length} cases written to ${dir}\n`);
}
