/**
 * Test harness for the API: an app over an in-memory database, a temporary blob directory and the embedded queue.
 * Used by the API's own tests and by the end-to-end tests in test/.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pino from 'pino';
import { loadConfig, type Config } from '@plumbline/config';
import { createBlobStore, createStore, openDatabase, type BlobStore, type Db, type Store } from '@plumbline/store';
import { createEmbeddedQueue } from '@plumbline/queue';
import type { JobQueue } from '@plumbline/queue';
import type { Role } from '@plumbline/contracts';
import { buildApp, type AppDeps, type Clock } from './app.ts';

export interface TestApp {
  app: Awaited<ReturnType<typeof buildApp>>;
  store: Store;
  blobs: BlobStore;
  db: Db;
  queue: JobQueue;
  config: Config;
  dir: string;
  clock: Clock & { advance(ms: number): void };
  /** Plaintext tokens, one per role (the robot token is for `robotId`). */
  tokens: Record<Role, string>;
  robotId: string;
  close(): Promise<void>;
}

export async function createTestApp(
  opts: {
    env?: Record<string, string>;
    deps?: Partial<AppDeps>;
    robotId?: string;
    inspectBundle?: AppDeps['inspectBundle'];
    /** Queue under test; default the embedded queue on the same in-memory database. */
    makeQueue?: (db: Db) => JobQueue;
    /** Real time instead of the fixed test clock (end-to-end tests). */
    clock?: Clock;
  } = {},
): Promise<TestApp> {
  const dir = await mkdtemp(join(tmpdir(), 'plumbline-api-'));
  const config = loadConfig({ PLUMBLINE_DATA_DIR: dir, PLUMBLINE_LOG_LEVEL: 'silent', ...opts.env });
  const db = openDatabase(':memory:');
  const store = createStore(db);
  const queue = opts.makeQueue ? opts.makeQueue(db) : createEmbeddedQueue(db, { pollIntervalMs: 20, backoffMs: 20 });
  let nowMs = Date.parse('2026-12-01T08:00:00Z');
  const clock = opts.clock
    ? { now: () => opts.clock!.now(), advance: () => undefined }
    : { now: () => new Date(nowMs), advance: (ms: number) => void (nowMs += ms) };
  const blobs = createBlobStore(join(dir, 'blobs'));
  const robotId = opts.robotId ?? 'kestrel-01';
  const tokens = {
    robot: store.tokens.create({ role: 'robot', name: robotId, robot_id: robotId }).token,
    lead: store.tokens.create({ role: 'lead', name: 'ops-lead' }).token,
    integrator: store.tokens.create({ role: 'integrator', name: 'erp-bridge' }).token,
    admin: store.tokens.create({ role: 'admin', name: 'root' }).token,
  } satisfies Record<Role, string>;
  const inspectBundle =
    opts.inspectBundle ??
    (async () => {
      throw new Error('no inspectBundle wired in this test');
    });
  const app = await buildApp(config, {
    store,
    blobs,
    queue,
    logger: pino({ level: 'silent' }),
    clock,
    inspectBundle,
    ...opts.deps,
  });
  await app.ready();
  return {
    app,
    store,
    blobs,
    db,
    queue,
    config,
    dir,
    clock,
    tokens,
    robotId,
    async close() {
      await app.close();
      await queue.close();
      db.close();
      await rm(dir, { recursive: true, force: true });
    },
  };
}
