/**
 * Byte builders for the malformed-bundle corpus: a small valid run (kestrel-01 at harbourside-depot, 10 s) and
 * tar / tar.gz / zip writers that can also emit what a careful writer never would (links, devices, `..` names,
 * duplicates). Everything is deterministic: fixed mtimes, fixed data, no randomness.
 */
import { gzipSync } from 'node:zlib';
import { pack as tarPack, type Header } from 'tar-stream';
import yazl from 'yazl';

/** 2026-11-30T06:00:00Z in Unix seconds: the start of every corpus run. */
export const T0 = Date.UTC(2026, 10, 30, 6, 0, 0) / 1000;
const MTIME = new Date(T0 * 1000);

export type FileMap = Record<string, string | Buffer>;

export function manifest(runId: string, over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    format: 'plumbline-run/1',
    robot_id: 'kestrel-01',
    run_id: runId,
    site: 'harbourside-depot',
    started_at: '2026-11-30T06:00:00Z',
    software: { odometry: '4.2.1' },
    odometry: { file: 'odometry.csv', source: 'visual-inertial', monocular: false, world_gravity_aligned: true },
    imu: { file: 'imu.csv', rate_hz: 200 },
    extrinsics: { imu_T_odom: { translation: [0.1, 0, 0.05], rotation_wxyz: [1, 0, 0, 0] } },
    ...over,
  };
}

/** `n` IMU rows at 200 Hz: gentle rotation about z, specific force close to +g (m/s², rad/s). */
export function imuCsv(n = 2000, row?: (i: number, line: string) => string): string {
  const out = ['t,gx,gy,gz,ax,ay,az'];
  for (let i = 0; i < n; i++) {
    const a = Math.sin(i * 0.1);
    const line = `${(T0 + i * 0.005).toFixed(3)},${(0.01 * a).toFixed(6)},${(-0.02 * a).toFixed(6)},0.1,${(0.1 * a).toFixed(6)},-0.05,${(9.81 + 0.01 * a).toFixed(6)}`;
    out.push(row ? row(i, line) : line);
  }
  return out.join('\n') + '\n';
}

/** `n` odometry poses at 20 Hz turning at 0.1 rad/s about z (metres, Hamilton w-first quaternions). */
export function odometryCsv(n = 200, row?: (i: number, line: string) => string): string {
  const out = ['t,x,y,z,qw,qx,qy,qz'];
  for (let i = 0; i < n; i++) {
    const yaw = 0.005 * i;
    const line = `${(T0 + i * 0.05).toFixed(3)},${(0.1 * i).toFixed(4)},${(0.02 * i).toFixed(4)},0,${Math.cos(yaw / 2).toFixed(9)},0,0,${Math.sin(yaw / 2).toFixed(9)}`;
    out.push(row ? row(i, line) : line);
  }
  return out.join('\n') + '\n';
}

/** XOR of the bytes between `$` and `*` (NMEA 0183 checksum, two upper-case hex digits). */
export function nmeaChecksum(body: string): string {
  let x = 0;
  for (let i = 0; i < body.length; i++) x ^= body.charCodeAt(i);
  return x.toString(16).toUpperCase().padStart(2, '0');
}

/** GGA + RMC at 1 Hz for `n` s near the harbourside-depot origin (47.3821 N, 8.5412 E). */
export function nmeaText(n = 10, opts: { badChecksum?: boolean; rmc?: boolean } = {}): string {
  const lines: string[] = [];
  const put = (body: string) => lines.push(`$${body}*${opts.badChecksum ? (nmeaChecksum(body) === '00' ? '01' : '00') : nmeaChecksum(body)}`);
  for (let i = 0; i < n; i++) {
    const hhmmss = `0600${String(i).padStart(2, '0')}.00`;
    const lat = (22.926 + i * 0.0001).toFixed(4);
    put(`GNGGA,${hhmmss},47${lat},N,00832.4720,E,4,14,0.7,362.5,M,49.5,M,1.0,0000`);
    if (opts.rmc !== false) put(`GNRMC,${hhmmss},A,47${lat},N,00832.4720,E,0.5,90.0,301126,,,R`);
  }
  return lines.join('\r\n') + '\r\n';
}

/** The files of a valid 10-s run; `over` replaces (string/Buffer) or removes (null) files. */
export function runFiles(runId: string, opts: { manifest?: Record<string, unknown>; files?: Record<string, string | Buffer | null> } = {}): FileMap {
  const files: FileMap = {
    'run.json': JSON.stringify(manifest(runId, opts.manifest), null, 2),
    'odometry.csv': odometryCsv(),
    'imu.csv': imuCsv(),
  };
  for (const [name, data] of Object.entries(opts.files ?? {})) {
    if (data === null) delete files[name];
    else files[name] = data;
  }
  return files;
}

export interface TarEntry {
  name: string;
  data?: string | Buffer;
  type?: Header['type'];
  linkname?: string;
}

export const entriesOf = (files: FileMap, prefix = ''): TarEntry[] => Object.entries(files).map(([name, data]) => ({ name: prefix + name, data }));

export async function tar(entries: TarEntry[]): Promise<Buffer> {
  const p = tarPack();
  const parts: Buffer[] = [];
  const done = (async () => {
    for await (const c of p) parts.push(Buffer.from(c as Uint8Array));
  })();
  for (const e of entries) {
    const data = e.data === undefined ? undefined : Buffer.from(e.data);
    const header: Partial<Header> & { name: string } = {
      name: e.name,
      type: e.type ?? 'file',
      size: data?.length ?? 0,
      mode: e.type === 'directory' ? 0o755 : 0o644,
      mtime: MTIME,
      ...(e.linkname === undefined ? {} : { linkname: e.linkname }),
    };
    await new Promise<void>((resolve, reject) => {
      const cb = (err?: Error | null) => (err ? reject(err) : resolve());
      if (data === undefined) p.entry(header, cb);
      else p.entry(header, data, cb);
    });
  }
  p.finalize();
  await done;
  return Buffer.concat(parts);
}

export const tarGz = async (entries: TarEntry[]): Promise<Buffer> => gzipSync(await tar(entries));

export interface ZipEntry {
  name: string;
  data: string | Buffer;
  mode?: number;
  compress?: boolean;
}

export async function zip(entries: ZipEntry[]): Promise<Buffer> {
  const z = new yazl.ZipFile();
  for (const e of entries) z.addBuffer(Buffer.from(e.data), e.name, { mode: e.mode ?? 0o100644, compress: e.compress ?? true, mtime: MTIME });
  z.end();
  const parts: Buffer[] = [];
  for await (const c of z.outputStream) parts.push(c as Buffer);
  return Buffer.concat(parts);
}

/** Replaces every occurrence of an ASCII name in archive bytes by one of equal length (names yazl refuses to write). */
export function patchName(bytes: Buffer, from: string, to: string): Buffer {
  if (from.length !== to.length) throw new RangeError('names must have equal length');
  const out = Buffer.from(bytes);
  for (let i = out.indexOf(from); i >= 0; i = out.indexOf(from, i + 1)) out.write(to, i, 'latin1');
  return out;
}

/** A copy with the byte at `at` (negative: from the end) XOR-ed with 0xff. */
export function flipByte(bytes: Buffer, at: number): Buffer {
  const out = Buffer.from(bytes);
  const i = at < 0 ? out.length + at : at;
  out[i] = out[i]! ^ 0xff;
  return out;
}

/** Deterministic pseudo-random bytes (xorshift32), for "not an archive" and over-limit bodies. */
export function noise(n: number, seed = 0x2545f491): Buffer {
  const out = Buffer.alloc(n);
  let x = seed >>> 0;
  for (let i = 0; i < n; i++) {
    x ^= x << 13;
    x >>>= 0;
    x ^= x >>> 17;
    x ^= x << 5;
    x >>>= 0;
    out[i] = x & 0xff;
  }
  return out;
}
