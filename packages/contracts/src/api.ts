import { z } from 'zod';
import { FlagDisposition, FlagKind, Role, RunDecision, RunStatus, Severity, Verdict, WebhookEvent } from './vocabulary.ts';
import { Report } from './report.ts';

/** RFC 9457 problem details. `type` is stable per error code. */
export const Problem = z
  .object({
    type: z.string(),
    title: z.string(),
    status: z.number().int(),
    detail: z.string().optional(),
    instance: z.string().optional(),
    code: z.string(),
    /** Where the input was bad, when the error is about a file in a bundle. */
    file: z.string().optional(),
    line: z.number().int().optional(),
    column: z.number().int().optional(),
  })
  .catchall(z.unknown());
export type Problem = z.infer<typeof Problem>;

export const RunSummary = z
  .object({
    id: z.string(),
    robot_id: z.string(),
    run_id: z.string(),
    site: z.string(),
    started_at: z.string().nullable(),
    received_at: z.string(),
    status: RunStatus,
    status_reason: z.string().nullable(),
    sha256: z.string(),
    size_bytes: z.number().int(),
    score: z.number().nullable(),
    verdict: Verdict.nullable(),
    worst_severity: Severity.nullable(),
    flag_counts: z.record(z.string(), z.number().int()),
    duration_s: z.number().nullable(),
    distance_m: z.number().nullable(),
    decision: RunDecision.nullable(),
    reviewed_at: z.string().nullable(),
  })
  .strict();
export type RunSummary = z.infer<typeof RunSummary>;

export const RunSort = z.enum(['received_at', '-received_at', 'started_at', '-started_at', 'score', '-score', 'priority']);
export type RunSort = z.infer<typeof RunSort>;

export const RunListQuery = z
  .object({
    robot_id: z.string().optional(),
    site: z.string().optional(),
    verdict: Verdict.optional(),
    status: RunStatus.optional(),
    flag_kind: FlagKind.optional(),
    reviewed: z.enum(['true', 'false']).optional(),
    score_min: z.coerce.number().min(0).max(100).optional(),
    score_max: z.coerce.number().min(0).max(100).optional(),
    started_after: z.iso.datetime({ offset: true }).optional(),
    started_before: z.iso.datetime({ offset: true }).optional(),
    sort: RunSort.default('-received_at'),
    limit: z.coerce.number().int().min(1).max(500).default(50),
    cursor: z.string().optional(),
  })
  .strict();
export type RunListQuery = z.infer<typeof RunListQuery>;

export const RunListPage = z
  .object({ items: z.array(RunSummary), next_cursor: z.string().nullable(), total: z.number().int().nullable() })
  .strict();
export type RunListPage = z.infer<typeof RunListPage>;

export const FlagReview = z.object({ flag_id: z.string(), disposition: FlagDisposition, note: z.string().max(4000).optional() }).strict();
export type FlagReview = z.infer<typeof FlagReview>;

export const ReviewInput = z
  .object({
    decision: RunDecision,
    note: z.string().max(4000).default(''),
    flags: z.array(FlagReview).default([]),
  })
  .strict();
export type ReviewInput = z.infer<typeof ReviewInput>;

export const Review = z
  .object({
    id: z.number().int(),
    run: z.string(),
    decision: RunDecision,
    note: z.string(),
    flags: z.array(FlagReview),
    reviewer: z.string(),
    created_at: z.string(),
  })
  .strict();
export type Review = z.infer<typeof Review>;

export const AuditEntry = z
  .object({
    id: z.number().int(),
    at: z.string(),
    actor: z.string(),
    action: z.string(),
    subject: z.string(),
    detail: z.record(z.string(), z.unknown()),
  })
  .strict();
export type AuditEntry = z.infer<typeof AuditEntry>;

export const RunDetail = z
  .object({
    summary: RunSummary,
    report: Report.nullable(),
    reviews: z.array(Review),
  })
  .strict();
export type RunDetail = z.infer<typeof RunDetail>;

export const RobotSummary = z
  .object({
    robot_id: z.string(),
    site: z.string().nullable(),
    runs: z.number().int(),
    latest_run: RunSummary.nullable(),
    /** Scores of the most recent runs, oldest first, for a small trend. */
    recent_scores: z.array(z.number()),
  })
  .strict();
export type RobotSummary = z.infer<typeof RobotSummary>;

export const UploadSessionCreate = z
  .object({
    robot_id: z.string(),
    run_id: z.string(),
    size_bytes: z.number().int().positive(),
    sha256: z.string().regex(/^[0-9a-f]{64}$/),
    filename: z.string().max(255).optional(),
  })
  .strict();
export type UploadSessionCreate = z.infer<typeof UploadSessionCreate>;

export const UploadSession = z
  .object({
    id: z.string(),
    robot_id: z.string(),
    run_id: z.string(),
    size_bytes: z.number().int(),
    sha256: z.string(),
    received_bytes: z.number().int(),
    state: z.enum(['open', 'complete', 'aborted']),
    expires_at: z.string(),
    run: z.string().nullable(),
  })
  .strict();
export type UploadSession = z.infer<typeof UploadSession>;

export const TokenCreate = z
  .object({ role: Role, name: z.string().min(1).max(128), robot_id: z.string().optional() })
  .strict();
export type TokenCreate = z.infer<typeof TokenCreate>;

export const TokenInfo = z
  .object({
    id: z.string(),
    role: Role,
    name: z.string(),
    robot_id: z.string().nullable(),
    created_at: z.string(),
    revoked_at: z.string().nullable(),
  })
  .strict();
export type TokenInfo = z.infer<typeof TokenInfo>;

export const WebhookCreate = z
  .object({ url: z.url(), events: z.array(WebhookEvent).min(1), secret: z.string().min(16).max(256) })
  .strict();
export type WebhookCreate = z.infer<typeof WebhookCreate>;

export const WebhookInfo = z
  .object({ id: z.string(), url: z.string(), events: z.array(WebhookEvent), created_at: z.string(), active: z.boolean() })
  .strict();
export type WebhookInfo = z.infer<typeof WebhookInfo>;

export const WebhookDelivery = z
  .object({
    id: z.number().int(),
    webhook_id: z.string(),
    event: WebhookEvent,
    attempts: z.number().int(),
    status: z.enum(['pending', 'delivered', 'failed']),
    last_status_code: z.number().int().nullable(),
    last_error: z.string().nullable(),
    next_attempt_at: z.string().nullable(),
    created_at: z.string(),
  })
  .strict();
export type WebhookDelivery = z.infer<typeof WebhookDelivery>;

/** Payload of an analysis job on either queue adapter. */
export const AnalysisJob = z
  .object({ run: z.string(), sha256: z.string().regex(/^[0-9a-f]{64}$/), policy: z.string().optional(), attempt_tag: z.string().optional() })
  .strict();
export type AnalysisJob = z.infer<typeof AnalysisJob>;
