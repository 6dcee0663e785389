/**
 * Public interfaces of the store. The surface is deliberately narrow (repositories that take and return the
 * contract types of `@plumbline/contracts`, no SQL or database handles leak through them) so the store can later
 * move to a server database behind the same interfaces; only `openDatabase` and the factories know about SQLite.
 *
 * Times are ISO 8601 UTC strings with milliseconds (`2026-12-02T00:30:00.000Z`) everywhere.
 * Every method is synchronous (better-sqlite3) except the blob store, which does file I/O.
 */
import type { Readable } from 'node:stream';
import type {
  AuditEntry,
  Report,
  Review,
  ReviewInput,
  RobotSummary,
  RunListPage,
  RunListQuery,
  RunStatus,
  RunSummary,
  TokenCreate,
  TokenInfo,
  UploadSession,
  UploadSessionCreate,
  WebhookCreate,
  WebhookDelivery,
  WebhookEvent,
  WebhookInfo,
} from '@plumbline/contracts';
import type BetterSqlite3 from 'better-sqlite3';
import type { FeedbackRepository, MaintenanceRepository, PolicyRepository } from './fleet-types.ts';

/** The SQLite handle returned by `openDatabase`; pass it to `createStore` and `createEmbeddedQueue`. */
export type Db = BetterSqlite3.Database;

export interface OpenDatabaseOptions {
  /** Directory of `NNNN_name.sql` files; defaults to the repository's `migrations/`. */
  migrationsDir?: string;
  /** Milliseconds a writer waits for a lock before SQLITE_BUSY (default 5000). */
  busyTimeoutMs?: number;
}

/** Input of `runs.create`: what the API knows once the bundle is stored and its manifest checked. */
export interface RunCreate {
  robot_id: string;
  run_id: string;
  site: string;
  started_at: string | null;
  sha256: string;
  size_bytes: number;
  /** Manifest as parsed (kept as JSON for later re-analysis and display); optional. */
  manifest?: unknown;
  /** Status to create the run in; default `received`. */
  status?: RunStatus;
  /** Reason, for runs created straight into `rejected`. */
  status_reason?: string | null;
}

export interface RunCreateResult {
  run: RunSummary;
  /** false: a run with the same (robot_id, run_id, sha256) already existed and is returned unchanged. */
  created: boolean;
}

/** What a worker needs to analyse a run: the job key it must present when recording the result. */
export interface AnalysisTicket {
  run: string;
  sha256: string;
  /** `${runId}-g${generation}` (no ":" — BullMQ forbids it in custom ids); use it as the queue jobId and as AnalysisJob.attempt_tag. */
  job_key: string;
  generation: number;
  policy: string | null;
}

export type RecordOutcome =
  | { recorded: true; reportId: number }
  | { recorded: false; reason: 'not-found' | 'stale-job' | 'already-recorded' | 'wrong-status' };

export interface RunRepository {
  /** Creates a run (and its robot) or returns the existing identical one. Throws RunConflictError when
   *  (robot_id, run_id) exists with a different sha256. */
  create(input: RunCreate): RunCreateResult;
  get(id: string): RunSummary | null;
  findByKey(robotId: string, runId: string): RunSummary | null;
  /** Parsed manifest stored with the run, or null. */
  manifest(id: string): unknown;
  /** Filtered, sorted, keyset-paginated list. `total` is counted on the first page only (null when a cursor is
   *  given). Throws InvalidCursorError on a cursor it did not issue. */
  list(query: RunListQuery): RunListPage;
  /** Ids of all runs matching the filter part of a query (sort/limit/cursor ignored), for bulk re-analysis. */
  idsMatching(query: Partial<RunListQuery>, max?: number): string[];
  /** Sets status (and reason). With `from`, only when the current status is one of them; returns whether it changed. */
  setStatus(id: string, status: RunStatus, opts?: { reason?: string | null; from?: RunStatus[] }): boolean;
  /**
   * Starts a new analysis generation: bumps the generation, sets the expected job key, status `queued`.
   * Results of older generations are refused by `reports.recordAnalysis` afterwards. Null when the run is unknown.
   */
  requestAnalysis(id: string, opts?: { policy?: string | null }): AnalysisTicket | null;
  /** `queued` -> `analysing` if `jobKey` is the current key; false when stale or already finished. */
  markAnalysing(id: string, jobKey: string): boolean;
  /** Marks the current generation failed (only when `jobKey` is current and the run is not done). */
  markFailed(id: string, jobKey: string, reason: string): boolean;
  /** Marks the current generation rejected (bad bundle data; only when `jobKey` is current and the run is not done). */
  markRejected(id: string, jobKey: string, reason: string): boolean;
  /** True when a run's bundle or a report's repaired trajectory is the blob with this SHA-256 (guards blob removal). */
  blobReferenced(sha256: string): boolean;
  /** The current ticket of a run (e.g. to re-enqueue after a restart), or null. */
  ticket(id: string): AnalysisTicket | null;
  /** Runs in `queued`/`analysing`, oldest first, to re-enqueue at start-up (the queue dedups by job key). */
  pendingTickets(limit?: number): AnalysisTicket[];
}

/**
 * A callback run inside the same transaction, after the write and only if it happened, with the updated run
 * summary — e.g. to queue the `run.analysed` / `run.reviewed` webhook deliveries so that the event is stored
 * together with the fact (no lost event if the process dies in between). Throwing rolls everything back.
 */
export interface WithinTransaction {
  within?: (run: RunSummary) => void;
}

export interface RecordOptions extends WithinTransaction {
  /** The blob holding the gzipped repaired trajectory CSV produced with this report (stored before recording). */
  repairedCsvSha256?: string | null;
}

export interface StoredReportInfo {
  id: number;
  run: string;
  job_key: string;
  analysis_version: string;
  policy_hash: string;
  score: number;
  verdict: string;
  current: boolean;
  created_at: string;
}

export interface ReportRepository {
  /**
   * Records an analysis result exactly once. One transaction checks that `jobKey` is the run's current key and the
   * run is `queued`/`analysing`, then writes the report (the previous one stays, no longer current), its flags and
   * segments, the run summary fields (score, verdict, worst severity, flag counts, priority), status `done`, and an
   * audit entry. A second call with the same key returns `{ recorded: false, reason: 'already-recorded' }`.
   */
  recordAnalysis(runId: string, report: Report, jobKey: string, opts?: RecordOptions): RecordOutcome;
  /** The current report of a run, or null. */
  current(runId: string): Report | null;
  /** SHA-256 of the gzipped repaired-trajectory CSV of the current report (a blob), or null when none was stored. */
  repairedCsvOf(runId: string): string | null;
  /** All reports of a run, newest first (metadata only). */
  history(runId: string): StoredReportInfo[];
  /** One stored report by id (current or previous). */
  get(reportId: number): Report | null;
}

export interface ReviewRepository {
  /** Stores a review, sets the run's decision and reviewed_at, recomputes priority, appends an audit entry
   *  (`run.reviewed`), all in one transaction. Throws NotFoundError for an unknown run. */
  add(runId: string, input: ReviewInput, reviewer: string, opts?: WithinTransaction): Review;
  /** Reviews of a run, oldest first. */
  list(runId: string): Review[];
}

export interface AuditRepository {
  /** Appends one entry; the table rejects UPDATE and DELETE (triggers). */
  append(actor: string, action: string, subject: string, detail?: Record<string, unknown>): AuditEntry;
  /** Entries, newest first; `subject` filters to one subject (e.g. a run id). */
  list(opts?: { subject?: string; limit?: number; beforeId?: number }): AuditEntry[];
}

export interface TokenCreateResult {
  /** The plaintext token. Shown once; only its SHA-256 is stored. Format `plb_<id>_<43 base64url chars>`. */
  token: string;
  info: TokenInfo;
}

export interface TokenRepository {
  create(input: TokenCreate): TokenCreateResult;
  /** Looks the token up by its id part, compares SHA-256 hashes in constant time; null if unknown or revoked. */
  verify(token: string): TokenInfo | null;
  list(): TokenInfo[];
  /** Revokes at once (the next `verify` fails). Returns false if unknown or already revoked. */
  revoke(id: string): boolean;
  /** Number of active tokens with a role, e.g. to bootstrap the first admin. */
  countActive(role?: TokenInfo['role']): number;
}

/** A delivery claimed for sending; `payload` is the exact JSON text to sign and send. */
export interface DueDelivery {
  id: number;
  webhook_id: string;
  url: string;
  secret: string;
  event: WebhookEvent;
  payload: string;
  attempts: number;
}

export interface DeliveryRetryPolicy {
  /** After this many failed attempts the delivery is `failed` for good (default 8). */
  maxAttempts?: number;
  /** First retry delay; doubles each attempt, capped at `maxDelayMs` (defaults 10 s, 1 h). */
  baseDelayMs?: number;
  maxDelayMs?: number;
}

export interface WebhookRepository {
  create(input: WebhookCreate): WebhookInfo;
  list(): WebhookInfo[];
  get(id: string): WebhookInfo | null;
  /** Deactivates (deliveries stay visible). Returns false if unknown or already inactive. */
  remove(id: string): boolean;
  /** Queues one delivery per active webhook subscribed to `event`; returns the number queued. */
  enqueueEvent(event: WebhookEvent, payload: unknown, now?: Date): number;
  /**
   * Claims up to `limit` pending deliveries due at `now`: pushes their next_attempt_at forward by `leaseMs`
   * (default 60 s) in the same transaction so two senders never send the same delivery at once.
   */
  claimDue(now: Date, limit: number, leaseMs?: number): DueDelivery[];
  markDelivered(id: number, statusCode: number): void;
  /** Records a failed attempt; schedules the next with exponential backoff or gives up. Returns the new status. */
  markFailed(id: number, failure: { statusCode?: number | null; error: string }, policy?: DeliveryRetryPolicy, now?: Date): 'pending' | 'failed';
  /** Deliveries of one webhook, newest first. */
  deliveries(webhookId: string, limit?: number): WebhookDelivery[];
}

/** An upload session with the server-side fields the contract type hides. */
export interface UploadSessionRecord extends UploadSession {
  temp_path: string;
  filename: string | null;
  created_at: string;
}

export interface UploadRepository {
  create(input: UploadSessionCreate & { id?: string; temp_path: string; ttl_ms: number }, now?: Date): UploadSessionRecord;
  get(id: string): UploadSessionRecord | null;
  /** Compare-and-set of the received offset: true only if the stored offset was `fromOffset` and the session is open. */
  advance(id: string, fromOffset: number, toOffset: number, now?: Date): boolean;
  complete(id: string, runId: string): void;
  abort(id: string): boolean;
  /** Open sessions whose expires_at is before `now`. */
  expired(now: Date, limit?: number): UploadSessionRecord[];
}

export interface RobotRepository {
  /** All robots with their latest run and up to `recent` recent scores (oldest first). */
  list(recent?: number): RobotSummary[];
  get(robotId: string, recent?: number): RobotSummary | null;
}

export interface StoreStats {
  runs_total: number;
  runs_by_status: Record<string, number>;
  runs_by_verdict: Record<string, number>;
  webhook_deliveries_pending: number;
  open_uploads: number;
}

export interface Store {
  runs: RunRepository;
  reports: ReportRepository;
  reviews: ReviewRepository;
  audit: AuditRepository;
  tokens: TokenRepository;
  webhooks: WebhookRepository;
  uploads: UploadRepository;
  robots: RobotRepository;
  /** Fleet view (migration 0002): maintenance findings, versioned policies, review feedback. */
  maintenance: MaintenanceRepository;
  policies: PolicyRepository;
  feedback: FeedbackRepository;
  /** Counts for /metrics. */
  stats(): StoreStats;
  /** True when the database answers a trivial query (for /readyz). */
  ping(): boolean;
  /**
   * Runs `fn` (synchronous) with the caches over this connection checking for commits by other connections once
   * between them, not on every lookup: one request's token and page cost one check. Writes through this connection
   * inside `fn` are still seen at once.
   */
  withOneChangeCheck<T>(fn: () => T): T;
}

export interface BlobInfo {
  sha256: string;
  sizeBytes: number;
  /** Final content-addressed path `<dir>/sha256/ab/cdef…`. */
  path: string;
}

export interface BlobWriteOptions {
  /** Abort with BlobTooLargeError (and delete the temp file) past this many bytes. */
  maxBytes: number;
  /** When given, a different digest aborts with BlobChecksumError and nothing is kept. */
  expectedSha256?: string;
}

/**
 * Content-addressed bundle storage. A blob only ever appears under its final name complete and fsynced:
 * writes go to a temp file in `<dir>/tmp/`, are hashed while written, fsynced, renamed, and the directory fsynced.
 */
export interface BlobStore {
  readonly dir: string;
  writeStream(source: Readable | AsyncIterable<Uint8Array>, opts: BlobWriteOptions): Promise<BlobInfo>;
  /** Creates an empty temp file for a resumable upload session and returns its path. */
  createTemp(label?: string): Promise<string>;
  /**
   * Writes `source` into a session temp file at byte `offset` (must equal the file's current size, else
   * BlobOffsetError with `expectedOffset`), fsyncs, and returns the new size. Writes to one file are serialised in
   * this process. On BlobTooLargeError (past `maxBytes`) or a source error the file is cut back to `offset`.
   */
  appendChunk(tempPath: string, offset: number, source: Readable | AsyncIterable<Uint8Array> | Uint8Array, opts: { maxBytes: number }): Promise<number>;
  /** Hashes a complete temp file; if it matches, moves it to its content address (fsync + rename + dir fsync). */
  promote(tempPath: string, expectedSha256: string): Promise<BlobInfo>;
  pathOf(sha256: string): string;
  has(sha256: string): Promise<boolean>;
  /** A read stream of a stored blob (throws NotFoundError if absent). */
  open(sha256: string): Readable;
  /**
   * Removes a stored blob unless `guard.isReferenced(sha256)` answers true (a run's bundle or a report's trajectory
   * still points at it). Returns whether it was removed; an absent blob answers `{ removed: false, reason: 'absent' }`.
   */
  remove(sha256: string, guard: { isReferenced(sha256: string): boolean }): Promise<{ removed: true } | { removed: false; reason: 'referenced' | 'absent' }>;
  /** Removes a temp file if present (idempotent). */
  removeTemp(tempPath: string): Promise<void>;
  /** Removes temp files not modified for `olderThanMs`; returns how many were removed. */
  sweep(olderThanMs: number, now?: Date): Promise<number>;
}

/**
 * Factories exported by `@plumbline/store` (signatures):
 * - `openDatabase(path | ':memory:', opts?)` — opens SQLite (WAL, busy_timeout, foreign keys), applies migrations.
 * - `createStore(db)` — all repositories over one database.
 * - `createBlobStore(dir)` — content-addressed bundle files.
 */
export type OpenDatabase = (path: string, opts?: OpenDatabaseOptions) => Db;
export type CreateStore = (db: Db) => Store;
export type CreateBlobStore = (dir: string) => BlobStore;
