import { createHash } from 'node:crypto';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { inspectBundle } from '@plumbline/bundle';
import { createTestApp, type TestApp } from '../services/api/src/testing.ts';
import { testManifest } from '../services/api/src/test-bundles.ts';
import { pushBundle, PushRefusedError } from '../services/cli/src/push-client.ts';
import { packDirectory } from '../services/cli/src/pack.ts';

let t: TestApp;
let url: string;
let dir: string;
beforeAll(async () => {
  t = await createTestApp({ inspectBundle, env: { PLUMBLINE_UPLOAD_RATE_PER_MIN: '1000' } });
  url = await t.app.listen({ port: 0, host: '127.0.0.1' });
  dir = await mkdtemp(join(tmpdir(), 'plumbline-push-test-'));
});
afterAll(async () => {
  await t.close();
  await rm(dir, { recursive: true, force: true });
});

async function bundleDir(runId: string, robotId = 'kestrel-01'): Promise<string> {
  const d = join(dir, runId);
  await mkdir(d, { recursive: true });
  await writeFile(join(d, 'run.json'), JSON.stringify(testManifest({ run_id: runId, robot_id: robotId })));
  // Enough bytes for several 4 KiB chunks after compression (pseudo-random digits do not compress away).
  let csv = 't,px,py,pz,qw,qx,qy,qz\n';
  let x = 12345;
  for (let i = 0; i < 2000; i++) {
    x = (x * 1103515245 + 12345) % 2147483648;
    csv += `${i * 0.05},${x % 9973},${x % 7919},0,1,0,0,0\n`;
  }
  await writeFile(join(d, 'odometry.csv'), csv);
  await writeFile(join(d, 'imu.csv'), 't,gx,gy,gz,ax,ay,az\n');
  return d;
}

describe('packDirectory', () => {
  it('gives the same archive digest for the same files', async () => {
    const d = await bundleDir('pack-twice');
    const a = await packDirectory(d);
    const b = await packDirectory(d);
    expect(a.sha256).toBe(b.sha256);
    expect(a.sizeBytes).toBe(b.sizeBytes);
    expect((await inspectBundle(a.path)).manifest.run_id).toBe('pack-twice');
    await a.cleanup();
    await b.cleanup();
  });
});

describe('pushBundle', () => {
  it('uploads a directory in chunks, retries after dropped requests, and is idempotent', async () => {
    const d = await bundleDir('push-flaky');
    let puts = 0;
    const notices: string[] = [];
    // Every third PUT "loses the connection" after the server stored the chunk: the client must ask for the offset.
    const flaky: typeof fetch = async (input, init) => {
      const res = await fetch(input, init);
      if (init?.method === 'PUT' && ++puts % 3 === 0) throw new TypeError('socket hang up');
      return res;
    };
    const progress: number[] = [];
    const r = await pushBundle({
      bundle: d, server: url, token: t.tokens.robot, chunkBytes: 4096, baseDelayMs: 1, fetch: flaky,
      onProgress: (sent) => progress.push(sent), onNotice: (l) => notices.push(l),
    });
    expect(r.created).toBe(true);
    expect(r.run).toMatchObject({ run_id: 'push-flaky', status: 'queued', size_bytes: r.sizeBytes });
    expect(r.sizeBytes).toBeGreaterThan(3 * 4096);
    expect(notices.some((n) => n.includes('socket hang up'))).toBe(true);
    expect(progress.at(-1)).toBe(r.sizeBytes);
    const packed = await packDirectory(d);
    expect(r.sha256).toBe(packed.sha256);
    expect(t.store.runs.get(r.run.id)?.sha256).toBe(createHash('sha256').update(await readFile(packed.path)).digest('hex'));
    await packed.cleanup();
    const again = await pushBundle({ bundle: d, server: url, token: t.tokens.robot, chunkBytes: 1 << 20 });
    expect(again.created).toBe(false);
    expect(again.run.id).toBe(r.run.id);
  });
  it('ends with the server\'s problem when the upload is refused', async () => {
    const d = await bundleDir('push-other', 'plover-01');
    const err = await pushBundle({ bundle: d, server: url, token: t.tokens.robot }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(PushRefusedError);
    expect((err as PushRefusedError).status).toBe(403);
    expect((err as PushRefusedError).problem.code).toBe('ROBOT_MISMATCH');
  });
});
