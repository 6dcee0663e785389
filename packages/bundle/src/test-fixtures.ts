/** Fixture builders shared by this package's tests (not exported from the package). */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { pack as tarPack, type Header } from 'tar-stream';
import yazl from 'yazl';

export const enc = (s: string): Uint8Array => new TextEncoder().encode(s);

/** Splits bytes into chunks of `size` (the last may be shorter). */
export function chunked(bytes: Uint8Array, size: number): Uint8Array[] {
  const out: Uint8Array[] = [];
  for (let i = 0; i < bytes.length; i += size) out.push(bytes.subarray(i, i + size));
  return out;
}

const dirs: string[] = [];
export async function tempDir(): Promise<string> {
  const d = await mkdtemp(join(tmpdir(), 'plumbline-bundle-test-'));
  dirs.push(d);
  return d;
}
export async function removeTempDirs(): Promise<void> {
  await Promise.all(dirs.splice(0).map((d) => rm(d, { recursive: true, force: true })));
}

export const T0 = 1_796_000_000; // 2026-11-30 (epoch seconds)

/** kestrel-01 at harbourside-depot: a manifest naming odometry, IMU, NMEA GNSS and loops. */
export function manifest(overrides: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    format: 'plumbline-run/1',
    robot_id: 'kestrel-01',
    run_id: 'kestrel-01-20261130-0600',
    site: 'harbourside-depot',
    started_at: '2026-11-30T06:00:00Z',
    software: { odometry: '4.2.1' },
    odometry: { file: 'odometry.csv', source: 'visual-inertial', monocular: false, world_gravity_aligned: true },
    imu: { file: 'imu.csv', rate_hz: 200 },
    extrinsics: { imu_T_odom: { translation: [0.1, 0, 0.05], rotation_wxyz: [1, 0, 0, 0] } },
    gnss: { file: 'gnss.nmea', antenna_in_imu: [0, 0, 0.3] },
    loops: { file: 'loops.csv' },
    ...overrides,
  };
}

export function imuCsv(n: number, t0 = T0): string {
  let s = 't,gx,gy,gz,ax,ay,az\n';
  for (let i = 0; i < n; i++) {
    const a = Math.sin(i * 0.1);
    s += `${t0 + i * 0.005},${0.01 * a},${-0.02 * a},${0.003},${0.1 * a},${-0.05},${9.81 + 0.01 * a}\n`;
  }
  return s;
}

export function odometryCsv(n: number, t0 = T0): string {
  let s = 't,x,y,z,qw,qx,qy,qz\n';
  for (let i = 0; i < n; i++) {
    const h = 0.01 * i;
    s += `${t0 + i * 0.05},${0.1 * i},${0.02 * i},0,${Math.cos(h / 2)},0,0,${Math.sin(h / 2)}\n`;
  }
  return s;
}

export function loopsCsv(): string {
  return 't_a,t_b,x,y,z,qw,qx,qy,qz,sigma_t,sigma_r\n' + `${T0 + 0.5},${T0 + 9.5},0.01,-0.02,0,1,0,0,0,0.05,0.01\n`;
}

/** XOR of the bytes between `$` and `*` as two upper-case hex digits (NMEA 0183 checksum). */
export function nmeaChecksum(body: string): string {
  let x = 0;
  for (let i = 0; i < body.length; i++) x ^= body.charCodeAt(i);
  return x.toString(16).toUpperCase().padStart(2, '0');
}
export const sentence = (body: string): string => `$${body}*${nmeaChecksum(body)}`;

/** Two GGA+RMC epochs at harbourside-depot, 2026-11-30 06:00:00 and 06:00:01 UTC. */
export function nmeaText(): string {
  return [
    sentence('GNGGA,060000.00,4722.9260,N,00832.4720,E,4,14,0.7,362.5,M,49.5,M,1.0,0000'),
    sentence('GNRMC,060000.00,A,4722.9260,N,00832.4720,E,0.5,90.0,301126,,,R'),
    sentence('GNGGA,060001.00,4722.9261,N,00832.4721,E,4,14,0.7,362.6,M,49.5,M,1.0,0000'),
    sentence('GNRMC,060001.00,A,4722.9261,N,00832.4721,E,0.5,90.0,301126,,,R'),
  ].join('\r\n') + '\r\n';
}

export type FileMap = Record<string, string | Uint8Array>;

export function bundleFiles(): FileMap {
  return {
    'run.json': JSON.stringify(manifest(), null, 2),
    'odometry.csv': odometryCsv(200),
    'imu.csv': imuCsv(2000),
    'gnss.nmea': nmeaText(),
    'loops.csv': loopsCsv(),
  };
}

export async function writeFiles(dir: string, files: FileMap): Promise<void> {
  for (const [name, data] of Object.entries(files)) {
    await mkdir(dirname(join(dir, name)), { recursive: true });
    await writeFile(join(dir, name), data);
  }
}

export interface TarEntry {
  name: string;
  data?: string | Uint8Array;
  type?: Header['type'];
  linkname?: string;
}

export async function tarBuffer(entries: TarEntry[], gzip = false): Promise<Buffer> {
  const p = tarPack();
  const done = (async () => {
    const parts: Buffer[] = [];
    for await (const c of p) parts.push(Buffer.from(c as Uint8Array));
    return Buffer.concat(parts);
  })();
  for (const e of entries) {
    const data = e.data === undefined ? undefined : Buffer.from(typeof e.data === 'string' ? enc(e.data) : e.data);
    const header: Partial<Header> & { name: string } = { name: e.name, type: e.type ?? 'file', ...(e.linkname === undefined ? {} : { linkname: e.linkname }), size: data?.length ?? 0, mode: e.type === 'directory' ? 0o755 : 0o644 };
    await new Promise<void>((resolve, reject) => {
      const cb = (err?: Error | null) => (err ? reject(err) : resolve());
      if (data === undefined) p.entry(header, cb);
      else p.entry(header, data, cb);
    });
  }
  p.finalize();
  const tar = await done;
  return gzip ? gzipSync(tar) : tar;
}

export interface ZipEntry {
  name: string;
  data: string | Uint8Array;
  mode?: number;
  compress?: boolean;
}

export async function zipBuffer(entries: ZipEntry[]): Promise<Buffer> {
  const z = new yazl.ZipFile();
  for (const e of entries) {
    const data = Buffer.from(typeof e.data === 'string' ? enc(e.data) : e.data);
    z.addBuffer(data, e.name, { mode: e.mode ?? 0o100644, compress: e.compress ?? true });
  }
  z.end();
  const parts: Buffer[] = [];
  for await (const c of z.outputStream) parts.push(c as Buffer);
  return Buffer.concat(parts);
}

/** Replaces every occurrence of an ASCII name in zip bytes (local and central headers) by one of equal length. */
export function patchName(zip: Buffer, from: string, to: string): Buffer {
  if (from.length !== to.length) throw new RangeError('names must have equal length');
  const out = Buffer.from(zip);
  let i = out.indexOf(from);
  while (i >= 0) {
    out.write(to, i, 'latin1');
    i = out.indexOf(from, i + 1);
  }
  return out;
}

export function filesAsTarEntries(files: FileMap, prefix = ''): TarEntry[] {
  return Object.entries(files).map(([name, data]) => ({ name: prefix + name, data }));
}

export function filesAsZipEntries(files: FileMap, prefix = ''): ZipEntry[] {
  return Object.entries(files).map(([name, data]) => ({ name: prefix + name, data }));
}
