/** Small bundle archives for API tests: a valid manifest and placeholder stream files (not analysable data). */
import { gzipSync } from 'node:zlib';
import { pack } from 'tar-stream';

export function testManifest(over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    format: 'plumbline-run/1',
    robot_id: 'kestrel-01',
    run_id: 'kestrel-01-20261130-0600',
    site: 'harbourside-depot',
    started_at: '2026-11-30T06:00:00Z',
    odometry: { file: 'odometry.csv', source: 'visual-inertial', monocular: false, world_gravity_aligned: true },
    imu: { file: 'imu.csv', rate_hz: 200 },
    extrinsics: { imu_T_odom: { translation: [0, 0, 0], rotation_wxyz: [1, 0, 0, 0] } },
    ...over,
  };
}

/** A .tar.gz holding `files` (name -> text). */
export async function tarGz(files: Record<string, string>): Promise<Buffer> {
  const p = pack();
  const chunks: Buffer[] = [];
  p.on('data', (c: unknown) => void chunks.push(c as Buffer));
  const done = new Promise<void>((resolve, reject) => {
    p.on('end', resolve);
    p.on('error', reject);
  });
  for (const [name, text] of Object.entries(files)) p.entry({ name, mtime: new Date('2026-11-30T06:00:00Z') }, text);
  p.finalize();
  await done;
  return gzipSync(Buffer.concat(chunks));
}

export async function testBundle(over: Record<string, unknown> = {}, manifestText?: string): Promise<Buffer> {
  return tarGz({
    'run.json': manifestText ?? JSON.stringify(testManifest(over), null, 2),
    'odometry.csv': 't,px,py,pz,qw,qx,qy,qz\n',
    'imu.csv': 't,gx,gy,gz,ax,ay,az\n',
  });
}
