import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import { readFile } from 'node:fs/promises';
import { extname, join, normalize } from 'node:path';
import { ReviewInput, type AuditEntry, type Report, type Review, type RobotSummary, type RunSummary, type Severity } from '@plumbline/contracts';
import { buildFixtureReport, type FixtureOptions } from './fixture-report.ts';

/**
 * Development server for the dashboard while the real API is elsewhere: serves dist/ and a small in-memory
 * `/api/v1` over fixture reports (runs, run detail, reviews, audit, robots). Not part of the product.
 */
export interface FixtureRun {
  summary: RunSummary;
  report: Report;
  reviews: Review[];
  audit: AuditEntry[];
}

const FLEET: [FixtureOptions['robotId'], FixtureOptions['site'], FixtureOptions['fault'], number][] = [
  ['kestrel-01', 'harbourside-depot', 'scale', 3600],
  ['kestrel-01', 'harbourside-depot', 'clean', 2400],
  ['kestrel-02', 'harbourside-depot', 'offset', 28800],
  ['kestrel-03', 'harbourside-depot', 'clean', 1800],
  ['plover-01', 'northgate-yard', 'scale', 5400],
  ['plover-02', 'northgate-yard', 'clean', 3000],
  ['heron-01', 'northgate-yard', 'offset', 2700],
  ['wren-01', 'harbourside-depot', 'clean', 1200],
  ['tern-01', 'northgate-yard', 'scale', 4200],
];

const SEV_RANK: Record<Severity, number> = { info: 1, warn: 2, critical: 3 };

/** Wrap reports as stored runs (summary fields derived from each report the way the store does). */
export function runsFromReports(reports: readonly Report[]): FixtureRun[] {
  return reports.map((report, i) => {
    const counts: Record<string, number> = {};
    let worst: Severity | null = null;
    for (const f of report.flags) {
      counts[f.kind] = (counts[f.kind] ?? 0) + 1;
      if (!worst || SEV_RANK[f.severity] > SEV_RANK[worst]) worst = f.severity;
    }
    const r = report.run;
    const summary: RunSummary = {
      id: `run-${String(i + 1).padStart(4, '0')}`, robot_id: r.robot_id, run_id: r.run_id, site: r.site, started_at: r.started_at,
      received_at: new Date(Date.parse(r.started_at) + (r.duration_s + 300) * 1000).toISOString(), status: 'done', status_reason: null,
      sha256: String(i).padStart(64, 'a'), size_bytes: Math.round(r.duration_s * 9000), score: report.score, verdict: report.verdict,
      worst_severity: worst, flag_counts: counts, duration_s: r.duration_s, distance_m: r.distance_m, decision: null, reviewed_at: null,
    };
    return { summary, report, reviews: [], audit: [{ id: i * 100 + 1, at: summary.received_at, actor: r.robot_id, action: 'run.uploaded', subject: summary.id, detail: { sha256: summary.sha256 } }] };
  });
}

export function buildFixtureRuns(): FixtureRun[] {
  return runsFromReports(
    FLEET.map(([robotId, site, fault, durationS], i) => {
      const startedAt = new Date(Date.UTC(2026, 10, 30, 5 + i, 10 * i, 0)).toISOString();
      const runId = `${startedAt.slice(0, 10)}-shift-${String(i + 1).padStart(2, '0')}`;
      return buildFixtureReport({ robotId, runId, site, startedAt, durationS, seed: 11 + i, fault });
    }),
  );
}

function send(res: ServerResponse, status: number, body: unknown, type = 'application/json'): void {
  res.writeHead(status, { 'content-type': type });
  res.end(typeof body === 'string' ? body : JSON.stringify(body));
}

function problem(res: ServerResponse, status: number, code: string, title: string): void {
  send(res, status, { type: `/problems/${code.toLowerCase().replace(/_/g, '-')}`, title, status, code }, 'application/problem+json');
}

function priority(a: RunSummary, b: RunSummary): number {
  const open = (r: RunSummary): number => (r.decision ? 1 : 0);
  const sev = (r: RunSummary): number => (r.worst_severity ? SEV_RANK[r.worst_severity] : 0);
  return open(a) - open(b) || sev(b) - sev(a) || b.received_at.localeCompare(a.received_at);
}

function listRuns(runs: FixtureRun[], q: URLSearchParams): unknown {
  let items = runs.map((r) => r.summary);
  const eq = (k: 'robot_id' | 'site' | 'verdict'): void => {
    const v = q.get(k);
    if (v) items = items.filter((r) => r[k] === v);
  };
  eq('robot_id'), eq('site'), eq('verdict');
  const kind = q.get('flag_kind');
  if (kind) items = items.filter((r) => (r.flag_counts[kind] ?? 0) > 0);
  const reviewed = q.get('reviewed');
  if (reviewed) items = items.filter((r) => (r.decision !== null) === (reviewed === 'true'));
  const after = q.get('started_after');
  const before = q.get('started_before');
  if (after) items = items.filter((r) => (r.started_at ?? '') >= after);
  if (before) items = items.filter((r) => (r.started_at ?? '') <= before);
  items.sort(q.get('sort') === 'priority' ? priority : (a, b) => b.received_at.localeCompare(a.received_at));
  const offset = Number(q.get('cursor') ? Buffer.from(q.get('cursor')!, 'base64url').toString() : 0);
  const limit = Number(q.get('limit') ?? 50);
  const page = items.slice(offset, offset + limit);
  const next = offset + limit < items.length ? Buffer.from(String(offset + limit)).toString('base64url') : null;
  return { items: page, next_cursor: next, total: items.length };
}

function robots(runs: FixtureRun[]): RobotSummary[] {
  const by = new Map<string, FixtureRun[]>();
  for (const r of runs) by.set(r.summary.robot_id, [...(by.get(r.summary.robot_id) ?? []), r]);
  return [...by.entries()].map(([robot_id, rs]) => {
    const sorted = rs.map((r) => r.summary).sort((a, b) => a.received_at.localeCompare(b.received_at));
    return { robot_id, site: sorted[0]!.site, runs: sorted.length, latest_run: sorted[sorted.length - 1] ?? null, recent_scores: sorted.map((s) => s.score ?? 0) };
  });
}

async function body(req: IncomingMessage): Promise<unknown> {
  const chunks: Buffer[] = [];
  for await (const c of req) chunks.push(c as Buffer);
  return JSON.parse(Buffer.concat(chunks).toString('utf8') || 'null');
}

export function createFixtureServer(distDir: string, token: string, runs = buildFixtureRuns()): Server {
  let reviewId = 1;
  let auditId = 10_000;
  const types: Record<string, string> = { '.html': 'text/html', '.js': 'text/javascript', '.css': 'text/css', '.map': 'application/json' };
  return createServer((req, res) => {
    void (async () => {
      const url = new URL(req.url ?? '/', 'http://localhost');
      if (!url.pathname.startsWith('/api/')) {
        const rel = url.pathname === '/' ? 'index.html' : normalize(url.pathname).replace(/^[/\\]+/, '');
        if (rel.includes('..')) return problem(res, 404, 'NOT_FOUND', 'Not found');
        try {
          return send(res, 200, await readFile(join(distDir, rel), 'utf8'), types[extname(rel)] ?? 'application/octet-stream');
        } catch {
          return problem(res, 404, 'NOT_FOUND', 'Not found');
        }
      }
      if (req.headers.authorization !== `Bearer ${token}`) return problem(res, 401, 'UNAUTHORIZED', 'Missing or unknown token');
      const m = url.pathname.match(/^\/api\/v1\/runs\/([^/]+)(\/reviews|\/audit)?$/);
      if (url.pathname === '/api/v1/me') return send(res, 200, { role: 'lead', name: 'fixture lead', robot_id: null });
      if (url.pathname === '/api/v1/runs') return send(res, 200, listRuns(runs, url.searchParams));
      if (url.pathname === '/api/v1/robots') return send(res, 200, robots(runs));
      const run = m ? runs.find((r) => r.summary.id === decodeURIComponent(m[1]!)) : undefined;
      if (!m || !run) return problem(res, 404, 'RUN_NOT_FOUND', 'No such run');
      if (!m[2]) return send(res, 200, { summary: run.summary, report: run.report, reviews: run.reviews });
      if (m[2] === '/audit') return send(res, 200, run.audit);
      if (req.method !== 'POST') return send(res, 200, run.reviews);
      const parsed = ReviewInput.safeParse(await body(req));
      if (!parsed.success) return problem(res, 422, 'INVALID_REVIEW', 'Review body does not match ReviewInput');
      const review: Review = { id: reviewId++, run: run.summary.id, ...parsed.data, reviewer: 'fixture lead', created_at: new Date().toISOString() };
      run.reviews.push(review);
      run.summary = { ...run.summary, decision: review.decision, reviewed_at: review.created_at };
      run.audit.push({ id: auditId++, at: review.created_at, actor: 'fixture lead', action: 'run.reviewed', subject: run.summary.id, detail: { decision: review.decision } });
      return send(res, 201, review);
    })().catch((err: unknown) => problem(res, 500, 'INTERNAL', String(err)));
  });
}
