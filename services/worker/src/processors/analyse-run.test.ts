import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import pino from 'pino';
import { DEFAULT_POLICY, type Policy } from '@plumbline/contracts';
import { scriptedReport } from '../testing.ts';
import { createBlobStore, createStore, openDatabase, type Db, type Store } from '@plumbline/store';
import { UnrecoverableJobError } from '@plumbline/queue';
import { createAnalyseRunProcessor, type Analyze } from './analyse-run.ts';
import { createLocalLedger } from '../ledger/local-ledger.ts';

/**
 * Processor tests with a scripted `analyze` seam: these check the run life cycle around the analysis (status
 * changes, exactly-once recording, rejection, retries), not the analysis itself.
 */
class BundleError extends Error {
  override readonly name = 'BundleError';
  constructor(readonly code: string, message: string, readonly file: string, readonly line: number, readonly column: number) {
    super(message);
  }
}

let db: Db;
let store: Store;
const outcomes: string[] = [];
beforeEach(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
  outcomes.length = 0;
});
afterEach(() => db.close());

function setup(analyze: Analyze, policyFor: (n: string | null) => Policy | null = () => DEFAULT_POLICY) {
  const { run } = store.runs.create({ robot_id: 'kestrel-01', run_id: 'shift-1', site: 'harbourside-depot', started_at: null, sha256: 'a'.repeat(64), size_bytes: 10 });
  const ticket = store.runs.requestAnalysis(run.id);
  if (!ticket) throw new Error('no ticket');
  const processor = createAnalyseRunProcessor({
    ledger: createLocalLedger({ store, blobs: createBlobStore('/nonexistent-blobs'), policyFor, clock: { now: () => new Date('2026-12-01T08:00:00Z') } }),
    analyze, logger: pino({ level: 'silent' }), maxAttempts: 3,
    onJobFinished: (_d, o) => outcomes.push(o),
  });
  const job = (attempt: number, key = ticket.job_key) => ({ id: key, attempt, payload: { run: run.id, sha256: ticket.sha256, attempt_tag: key } });
  return { run, ticket, processor, job };
}

describe('a successful analysis', () => {
  it('records the report once, sets done and queues run.analysed', async () => {
    let calls = 0;
    const { run, processor, job } = setup(async (path) => {
      calls++;
      expect(path).toMatch(/aaaa/);
      return scriptedReport(87);
    });
    store.webhooks.create({ url: 'http://127.0.0.1:9/h', events: ['run.analysed'], secret: 's'.repeat(20) });
    await processor(job(1));
    expect(store.runs.get(run.id)).toMatchObject({ status: 'done', score: 87, verdict: 'sound' });
    expect(store.stats().webhook_deliveries_pending).toBe(1);
    // The same job delivered again (e.g. after a lost acknowledgement) does no work.
    await processor(job(2));
    expect(calls).toBe(1);
    expect(outcomes).toEqual(['done', 'stale']);
    expect(store.reports.history(run.id)).toHaveLength(1);
  });
});

describe('a stale job', () => {
  it('is skipped once the run was re-queued under a new key', async () => {
    const { run, processor, job } = setup(async () => scriptedReport(50));
    store.runs.requestAnalysis(run.id);
    await processor(job(1));
    expect(outcomes).toEqual(['stale']);
    expect(store.runs.get(run.id)?.status).toBe('queued');
  });
});

describe('a bundle problem', () => {
  it('rejects the run with the located reason and does not retry', async () => {
    const { run, processor, job } = setup(async () => {
      throw new BundleError('CSV_BAD_HEADER', 'imu.csv:1:1: header must start with t', 'imu.csv', 1, 1);
    });
    await expect(processor(job(1))).rejects.toBeInstanceOf(UnrecoverableJobError);
    expect(store.runs.get(run.id)).toMatchObject({ status: 'rejected', status_reason: 'imu.csv:1:1: header must start with t' });
    expect(outcomes).toEqual(['rejected']);
  });
});

describe('a transient failure', () => {
  it('is rethrown for a retry, and marks the run failed on the last attempt', async () => {
    const { run, processor, job } = setup(async () => {
      throw new Error('EIO: disk hiccup');
    });
    await expect(processor(job(1))).rejects.toThrow('EIO');
    expect(store.runs.get(run.id)?.status).toBe('analysing');
    await expect(processor(job(3))).rejects.toThrow('EIO');
    expect(store.runs.get(run.id)).toMatchObject({ status: 'failed' });
    expect(store.runs.get(run.id)?.status_reason).toMatch(/after 3 attempts: EIO/);
    expect(outcomes).toEqual(['retry', 'failed']);
  });
});

describe('bad payloads', () => {
  it('refuses a payload without a job key and an unknown run as unrecoverable', async () => {
    const { processor } = setup(async () => scriptedReport(1));
    await expect(processor({ id: 'x', attempt: 1, payload: { run: 'r', sha256: 'a'.repeat(64) } })).rejects.toBeInstanceOf(UnrecoverableJobError);
    await expect(processor({ id: 'x', attempt: 1, payload: { run: 'nope', sha256: 'a'.repeat(64), attempt_tag: 'nope:1' } })).rejects.toBeInstanceOf(
      UnrecoverableJobError,
    );
  });
  it('fails the run for an unknown policy name', async () => {
    const { run, ticket, processor } = setup(async () => scriptedReport(1), () => null);
    await expect(processor({ id: 'x', attempt: 1, payload: { run: run.id, sha256: ticket.sha256, attempt_tag: ticket.job_key, policy: 'strict' } })).rejects.toBeInstanceOf(
      UnrecoverableJobError,
    );
    expect(store.runs.get(run.id)?.status).toBe('failed');
  });
});
