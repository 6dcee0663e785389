/**
 * Faults of the whole server process (`plumbline serve`, embedded mode, spawned as a child):
 * - killed with SIGKILL in the middle of a resumable upload: no partial run is visible, and the CLI push client
 *   resumes against the restarted server and finishes with the right bytes;
 * - SIGTERM while a request is in flight: the request completes, the process exits 0, no job stays leased.
 */
import { connect } from 'node:net';
import { rm } from 'node:fs/promises';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { pushBundle } from '../../services/cli/src/push-client.ts';
import { sha256, until, writeFigures } from './harness.ts';
import { CLI_MAIN, freePort, makeDataDir, openStore, sleep, smallBundle, spawnNode, type Child, type DataDir } from './fault-kit.ts';

const dirs: DataDir[] = [];
const children = new Set<Child>();
afterAll(async () => {
  for (const c of children) c.proc.kill('SIGKILL');
  for (const d of dirs) await rm(d.dir, { recursive: true, force: true });
});

async function serve(data: DataDir, port: number): Promise<Child> {
  const c = await spawnNode(CLI_MAIN, ['serve'], { PLUMBLINE_DATA_DIR: data.dir, PLUMBLINE_PORT: String(port), PLUMBLINE_LOG_LEVEL: 'warn', PLUMBLINE_UPLOAD_RATE_PER_MIN: '10000' }, /listening on/);
  children.add(c);
  return c;
}

/** A data directory with migrated database and a robot and a lead token. */
async function prepared(label: string): Promise<{ data: DataDir; robot: string; lead: string }> {
  const data = await makeDataDir(label);
  dirs.push(data);
  const { db, store } = openStore(data.dbPath);
  const robot = store.tokens.create({ role: 'robot', name: 'kestrel-01', robot_id: 'kestrel-01' }).token;
  const lead = store.tokens.create({ role: 'lead', name: 'ops-lead' }).token;
  db.close();
  return { data, robot, lead };
}

describe('server killed mid-upload', () => {
  it('shows no partial run and the push client resumes after the restart', async () => {
    const { data, robot } = await prepared('apikill');
    const port = await freePort();
    let server = await serve(data, port);
    const bytes = await smallBundle('resumed-after-crash');
    const file = join(data.dir, 'bundle.tar.gz');
    await writeFile(file, bytes);

    let puts = 0;
    let restarted: Promise<void> | null = null;
    const seenWhileDown: number[] = [];
    const killingFetch: typeof fetch = async (input, init) => {
      const res = await fetch(input, init);
      if (init?.method === 'PUT' && ++puts === 3 && !restarted) {
        server.proc.kill('SIGKILL');
        await server.exited;
        children.delete(server);
        const { db } = openStore(data.dbPath);
        seenWhileDown.push(db.prepare('SELECT count(*) FROM runs').pluck().get() as number);
        seenWhileDown.push(db.prepare("SELECT received_bytes FROM upload_sessions WHERE state = 'open'").pluck().get() as number);
        db.close();
        restarted = sleep(1000).then(async () => {
          server = await serve(data, port);
        });
      }
      return res;
    };
    const notices: string[] = [];
    const pushed = await pushBundle({ bundle: file, server: `http://127.0.0.1:${port}`, token: robot, chunkBytes: 2048, baseDelayMs: 250, maxRetries: 10, fetch: killingFetch, onNotice: (l) => notices.push(l) });
    await restarted;
    // While the server was down: no run, the session held exactly the three acknowledged chunks.
    expect(seenWhileDown).toEqual([0, 3 * 2048]);
    expect(notices.length).toBeGreaterThan(0);
    expect(pushed.created).toBe(true);
    expect(pushed.sha256).toBe(sha256(bytes));
    const { db } = openStore(data.dbPath);
    const run = await until('analysis after restart', () => {
      const r = db.prepare('SELECT status, sha256, size_bytes FROM runs').get() as { status: string; sha256: string; size_bytes: number } | undefined;
      return r && ['done', 'rejected', 'failed'].includes(r.status) ? r : null;
    }, 60_000, 200);
    expect(run).toEqual({ status: 'done', sha256: sha256(bytes), size_bytes: bytes.length });
    expect(db.prepare('SELECT count(*) FROM runs').pluck().get()).toBe(1);
    db.close();
    server.proc.kill('SIGTERM');
    expect(await server.exited).toBe(0);
    children.delete(server);
    await writeFigures('api-kill', { kills: 1, chunks_before_kill: 3, client_retries: notices.length, runs_visible_while_down: seenWhileDown[0], resumed: true });
  }, 120_000);
});

describe('graceful shutdown on SIGTERM', () => {
  it('finishes the request in flight, releases every job and exits 0', async () => {
    const { data, robot } = await prepared('sigterm');
    const port = await freePort();
    const server = await serve(data, port);
    const base = `http://127.0.0.1:${port}`;
    // A queued analysis, so the worker has something in hand when the signal arrives.
    const queued = await fetch(`${base}/api/v1/runs`, { method: 'POST', headers: { authorization: `Bearer ${robot}`, 'content-type': 'application/gzip' }, body: new Uint8Array(await smallBundle('before-sigterm')) });
    expect(queued.status).toBe(201);
    const bytes = await smallBundle('in-flight-at-sigterm');
    const open = await fetch(`${base}/api/v1/uploads`, {
      method: 'POST',
      headers: { authorization: `Bearer ${robot}`, 'content-type': 'application/json' },
      body: JSON.stringify({ robot_id: 'kestrel-01', run_id: 'in-flight-at-sigterm', size_bytes: bytes.length, sha256: sha256(bytes) }),
    });
    const session = (await open.json()) as { id: string };
    // Half of a chunk, then SIGTERM, then the rest: the answer must still be 200 with every byte stored.
    const answer = await new Promise<string>((resolve, reject) => {
      const sock = connect(port, '127.0.0.1', () => {
        sock.write(`PUT /api/v1/uploads/${session.id}?offset=0 HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer ${robot}\r\nContent-Type: application/octet-stream\r\nContent-Length: ${bytes.length}\r\nConnection: close\r\n\r\n`);
        sock.write(bytes.subarray(0, bytes.length >> 1));
        setTimeout(() => {
          server.proc.kill('SIGTERM');
          setTimeout(() => sock.write(bytes.subarray(bytes.length >> 1)), 300);
        }, 200);
      });
      let text = '';
      sock.on('data', (d: Buffer) => (text += d.toString()));
      sock.on('end', () => resolve(text));
      sock.on('error', reject);
    });
    expect(answer.split('\r\n')[0]).toBe('HTTP/1.1 200 OK');
    expect(answer).toContain(`"received_bytes":${bytes.length}`);
    expect(await server.exited).toBe(0);
    children.delete(server);
    const { db } = openStore(data.dbPath);
    expect(db.prepare('SELECT received_bytes FROM upload_sessions WHERE id = ?').pluck().get(session.id)).toBe(bytes.length);
    expect(db.prepare("SELECT count(*) FROM jobs WHERE state = 'active' OR lease_token IS NOT NULL AND state <> 'completed'").pluck().get()).toBe(0);
    db.close();
    await writeFigures('sigterm', { in_flight_request_completed: true, exit_code: 0, leased_jobs_after_exit: 0 });
  }, 120_000);
});
