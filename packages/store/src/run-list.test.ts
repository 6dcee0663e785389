import { RunListQuery, type FlagKind, type RunSort, type RunSummary, type Severity, type Verdict } from '@plumbline/contracts';
import { beforeAll, describe, expect, it } from 'vitest';
import { openDatabase } from './database.ts';
import { InvalidCursorError } from './errors.ts';
import { createStore } from './store.ts';
import { flag, report, runInput } from './testing/fixtures.ts';
import type { Db, Store } from './types.ts';

/**
 * A fleet of 240 runs built to stress ordering: received_at takes only 12 distinct values (20-way ties), scores
 * repeat and are sometimes missing, started_at is sometimes missing. Every list answer is checked against the
 * same filter and order computed in JavaScript over all runs.
 */
const ROBOTS = ['kestrel-01', 'kestrel-02', 'plover-01', 'heron-01'];
const SITES = ['harbourside-depot', 'northgate-yard'];
const KINDS: FlagKind[] = ['scale-drift', 'time-offset', 'loop-drift'];
const SEVERITIES: (Severity | null)[] = [null, 'info', 'warn', 'critical'];

let db: Db;
let store: Store;
let all: RunSummary[];
const flagKindsOf = new Map<string, FlagKind[]>();

beforeAll(() => {
  db = openDatabase(':memory:');
  store = createStore(db);
  for (let n = 0; n < 240; n++) {
    const { run } = store.runs.create(
      runInput(n, {
        robot_id: ROBOTS[Math.floor(n / 5) % 4],
        site: SITES[n % 2],
        started_at: n % 9 === 0 ? null : new Date(Date.UTC(2026, 10, 1 + (n % 20), 6)).toISOString(),
      }),
    );
    db.prepare('UPDATE runs SET received_at = ? WHERE id = ?').run(new Date(Date.UTC(2026, 10, 1 + (n % 12))).toISOString(), run.id);
    if (n % 5 === 4) continue; // left unanalysed: no score, status received
    const ticket = store.runs.requestAnalysis(run.id)!;
    const severity = SEVERITIES[n % 4]!;
    const kinds = severity === null ? [] : [KINDS[n % 3]!];
    flagKindsOf.set(run.id, kinds);
    const verdict: Verdict = severity === 'critical' ? 'unfit' : severity === 'warn' ? 'doubtful' : 'sound';
    const flags = kinds.map((k) => flag(k, severity!));
    expect(store.reports.recordAnalysis(run.id, report({ score: (n * 7) % 50, verdict, flags }), ticket.job_key).recorded).toBe(true);
    if (n % 7 === 0) store.reviews.add(run.id, { decision: 'accept', note: '', flags: [] }, 'lead-ana');
  }
  all = store.runs.list(RunListQuery.parse({ limit: 500 })).items;
  expect(all).toHaveLength(240);
});

type Key = (string | number)[];
const keyOf: Record<RunSort, (r: RunSummary) => Key> = {
  received_at: (r) => [r.received_at, r.id],
  '-received_at': (r) => [r.received_at, r.id],
  started_at: (r) => [r.started_at ?? '', r.id],
  '-started_at': (r) => [r.started_at ?? '', r.id],
  score: (r) => [r.score ?? -1, r.id],
  '-score': (r) => [r.score ?? -1, r.id],
  priority: (r) => [priorityOf(r), r.received_at, r.id],
};
function priorityOf(r: RunSummary): number {
  if (r.status !== 'done' || r.decision !== null) return 0;
  return r.worst_severity === null ? 1 : { info: 1, warn: 2, critical: 3 }[r.worst_severity];
}
function compare(a: Key, b: Key): number {
  for (let i = 0; i < a.length; i++) {
    const x = a[i]!;
    const y = b[i]!;
    if (x < y) return -1;
    if (x > y) return 1;
  }
  return 0;
}
function expected(sort: RunSort, keep: (r: RunSummary) => boolean): string[] {
  const desc = sort.startsWith('-') || sort === 'priority';
  return all
    .filter(keep)
    .sort((a, b) => (desc ? -1 : 1) * compare(keyOf[sort](a), keyOf[sort](b)))
    .map((r) => r.id);
}
function paginate(query: Record<string, unknown>): { ids: string[]; pages: number; totals: Set<number | null> } {
  const ids: string[] = [];
  const totals = new Set<number | null>();
  let cursor: string | undefined;
  let pages = 0;
  do {
    const page = store.runs.list(RunListQuery.parse({ ...query, limit: 7, ...(cursor ? { cursor } : {}) }));
    ids.push(...page.items.map((r) => r.id));
    totals.add(page.total);
    cursor = page.next_cursor ?? undefined;
    pages += 1;
  } while (cursor && pages < 100);
  return { ids, pages, totals };
}

describe('run list: every sort, paginated 7 at a time through 20-way ties', () => {
  for (const sort of RunSort_options()) {
    it(`sort ${sort}`, () => {
      const got = paginate({ sort });
      const want = expected(sort, () => true);
      expect(got.ids).toEqual(want); // same order, no duplicates, nothing skipped
      expect(got.pages).toBe(Math.ceil(240 / 7));
      expect([...got.totals]).toEqual([240, null]); // counted on the first page only
    });
  }
});

function RunSort_options(): RunSort[] {
  return ['received_at', '-received_at', 'started_at', '-started_at', 'score', '-score', 'priority'];
}

describe('run list: filters', () => {
  const cases: [string, Record<string, unknown>, (r: RunSummary) => boolean][] = [
    ['robot_id', { robot_id: 'plover-01' }, (r) => r.robot_id === 'plover-01'],
    ['site', { site: 'northgate-yard' }, (r) => r.site === 'northgate-yard'],
    ['verdict', { verdict: 'doubtful' }, (r) => r.verdict === 'doubtful'],
    ['status', { status: 'received' }, (r) => r.status === 'received'],
    ['flag_kind', { flag_kind: 'time-offset' }, (r) => (flagKindsOf.get(r.id) ?? []).includes('time-offset')],
    ['reviewed=true', { reviewed: 'true' }, (r) => r.reviewed_at !== null],
    ['reviewed=false', { reviewed: 'false' }, (r) => r.reviewed_at === null],
    ['score range', { score_min: '10', score_max: '30' }, (r) => r.score !== null && r.score >= 10 && r.score <= 30],
    [
      'started range (offset normalised to UTC)',
      { started_after: '2026-11-05T07:00:00+01:00', started_before: '2026-11-10T06:00:00Z' },
      (r) => r.started_at !== null && r.started_at >= '2026-11-05T06:00:00.000Z' && r.started_at < '2026-11-10T06:00:00.000Z',
    ],
    ['combined', { robot_id: 'kestrel-02', verdict: 'unfit', sort: 'priority' }, (r) => r.robot_id === 'kestrel-02' && r.verdict === 'unfit'],
  ];
  for (const [name, query, keep] of cases) {
    it(name, () => {
      const sort = (query.sort as RunSort | undefined) ?? '-received_at';
      const want = expected(sort, keep);
      expect(want.length).toBeGreaterThan(0); // the fixture exercises every filter
      const got = paginate({ ...query, sort });
      expect(got.ids).toEqual(want);
      expect([...got.totals][0]).toBe(want.length);
    });
  }
});

describe('run list: priority', () => {
  it('puts undecided critical runs first, decided and unanalysed runs last', () => {
    const top = store.runs.list(RunListQuery.parse({ sort: 'priority', limit: 500 })).items;
    const first = top[0]!;
    expect(first.worst_severity).toBe('critical');
    expect(first.decision).toBeNull();
    const last = top.at(-1)!;
    expect(last.decision !== null || last.status !== 'done').toBe(true);
  });
});

describe('run list: cursors', () => {
  it('rejects a cursor issued for another sort', () => {
    const page = store.runs.list(RunListQuery.parse({ sort: 'score', limit: 5 }));
    expect(() => store.runs.list(RunListQuery.parse({ sort: '-score', limit: 5, cursor: page.next_cursor }))).toThrow(InvalidCursorError);
  });
  it('rejects garbage', () => {
    expect(() => store.runs.list(RunListQuery.parse({ cursor: 'not-a-cursor' }))).toThrow(/invalid cursor/);
    const forged = Buffer.from(JSON.stringify({ s: '-received_at', k: [1] })).toString('base64url');
    expect(() => store.runs.list(RunListQuery.parse({ cursor: forged }))).toThrow(/malformed position/);
  });
});
