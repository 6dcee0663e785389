import { FeedbackReport, MaintenanceFinding, StoredPolicy, VerdictChange, type FeedbackCell, type ThresholdSuggestion } from '@plumbline/contracts';
import type { AppContext, View } from '../app-context.ts';
import { loadToken } from '../api-client.ts';
import { h } from '../dom.ts';
import { fmtTimestamp } from '../format.ts';
import { flagKindLabel, severityBadge, verdictBadge } from './badges.ts';

/** The part of a zod schema used here (the dashboard has no direct zod dependency). */
interface Parser<T> {
  safeParse(v: unknown): { success: true; data: T } | { success: false };
}
interface PolicyChanges {
  policy: StoredPolicy;
  previous: StoredPolicy | null;
  changes: VerdictChange[];
}

function arrayOf<T>(item: Parser<T>): (v: unknown) => T[] {
  return (v) => {
    if (!Array.isArray(v)) throw new Error('expected a list');
    return v.map((x) => {
      const r = item.safeParse(x);
      if (!r.success) throw new Error('a list item does not match its schema');
      return r.data;
    });
  };
}

function one<T>(schema: Parser<T>): (v: unknown) => T {
  return (v) => {
    const r = schema.safeParse(v);
    if (!r.success) throw new Error('the response does not match its schema');
    return r.data;
  };
}

const policyChanges = (v: unknown): PolicyChanges => {
  const o = v as { policy?: unknown; previous?: unknown; changes?: unknown } | null;
  return { policy: one(StoredPolicy)(o?.policy), previous: o?.previous === null ? null : one(StoredPolicy)(o?.previous), changes: arrayOf(VerdictChange)(o?.changes) };
};

async function getJson<T>(read: (v: unknown) => T, path: string): Promise<T> {
  const token = loadToken();
  const res = await fetch(`/api/v1${path}`, { headers: { Accept: 'application/json', ...(token ? { Authorization: `Bearer ${token}` } : {}) } });
  if (!res.ok) throw new Error(`${path}: HTTP ${res.status}`);
  try {
    return read(await res.json());
  } catch (err) {
    throw new Error(`${path}: ${(err as Error).message}`);
  }
}

/** "7 of 9 upheld (78 %)" — precision with the counts it rests on; "no reviews" when nothing was disposed. */
export function precisionText(c: Pick<FeedbackCell, 'upheld' | 'dismissed' | 'precision'>): string {
  if (c.precision === null) return 'no upheld or dismissed flags yet';
  return `${c.upheld} of ${c.upheld + c.dismissed} upheld (${Math.round(c.precision * 100)} %)`;
}

/** The suggestion in one sentence with its evidence, or the reason there is none. */
export function suggestionText(s: ThresholdSuggestion): string {
  if (!s.ok || s.suggested_warn === null) return `no suggestion: ${s.reason ?? 'not enough history'}`;
  const at = `${Number(s.suggested_warn.toPrecision(3))} ${s.unit}`;
  const now = s.current_warn === null ? 'none' : `${s.current_warn} ${s.unit}`;
  const pct = Math.round(s.target_dismissed_rate * 100);
  return `warn at ${at} (now ${now}): keeps ${s.upheld_kept} of ${s.upheld_total} upheld and ${s.dismissed_kept} of ${s.dismissed_total} dismissed flags (target ≤ ${pct} % dismissed)`;
}

function findingsTable(findings: MaintenanceFinding[]): HTMLElement {
  if (findings.length === 0) return h('p', { class: 'empty' }, 'No robot needs calibration work: no drift found in recent runs.');
  return h(
    'table',
    { class: 'runs maintenance-table' },
    h('thead', {}, h('tr', {}, ...['Robot', 'Severity', 'Finding', 'Since', 'Last checked'].map((t) => h('th', { scope: 'col' }, t)))),
    h(
      'tbody',
      {},
      ...findings.map((f) =>
        h(
          'tr',
          { 'data-finding': f.id },
          h('th', { scope: 'row' }, h('a', { href: `#/queue?reviewed=all&robot_id=${encodeURIComponent(f.robot_id)}` }, f.robot_id)),
          h('td', {}, severityBadge(f.severity)),
          h('td', {}, f.message),
          h('td', {}, fmtTimestamp(f.since)),
          h('td', {}, fmtTimestamp(f.updated_at)),
        ),
      ),
    ),
  );
}

function feedbackTable(fb: FeedbackReport): HTMLElement {
  if (fb.by_kind.length === 0) return h('p', { class: 'empty' }, 'No flag has been upheld or dismissed in a review yet.');
  const suggestion = new Map(fb.suggestions.map((s) => [s.kind, s]));
  return h(
    'table',
    { class: 'runs feedback-table' },
    h('thead', {}, h('tr', {}, ...['Flag kind', 'Confirmed by leads', 'Per site', 'Threshold suggestion'].map((t) => h('th', { scope: 'col' }, t)))),
    h(
      'tbody',
      {},
      ...fb.by_kind.map((c) =>
        h(
          'tr',
          { 'data-kind': c.kind },
          h('th', { scope: 'row' }, flagKindLabel(c.kind)),
          h('td', {}, precisionText(c)),
          h('td', { class: 'small' }, fb.by_kind_site.filter((s) => s.kind === c.kind).map((s) => `${s.site}: ${precisionText(s)}`).join(' · ')),
          h('td', { class: 'small' }, suggestion.has(c.kind) ? suggestionText(suggestion.get(c.kind)!) : '—'),
        ),
      ),
    ),
  );
}

function policySection(policies: StoredPolicy[], changes: PolicyChanges[]): HTMLElement {
  if (policies.length === 0) return h('p', { class: 'empty' }, 'No policy versions stored; runs are judged by the configured policy.');
  return h(
    'div',
    {},
    h('ul', { class: 'policy-list' }, ...policies.map((p) => h('li', {}, `${p.name} v${p.version} · ${p.hash.slice(0, 12)} · stored ${fmtTimestamp(p.created_at)} by ${p.created_by}`))),
    ...changes.map((c) =>
      h(
        'section',
        { class: 'policy-changes', 'data-policy': `${c.policy.name}@${c.policy.version}` },
        h('h3', {}, `Verdicts moved under ${c.policy.name} v${c.policy.version}${c.previous ? ` (previous v${c.previous.version})` : ''}: ${c.changes.length}`),
        c.changes.length
          ? h('ul', {}, ...c.changes.map((v) => h('li', {}, h('a', { href: `#/runs/${encodeURIComponent(v.run)}` }, `${v.robot_id}/${v.run_id}`), ' ', verdictBadge(v.before.verdict), ' → ', verdictBadge(v.after.verdict), ` score ${v.before.score.toFixed(0)} → ${v.after.score.toFixed(0)}`)))
          : h('p', { class: 'muted' }, 'No run changed verdict.'),
      ),
    ),
  );
}

/**
 * The open calibration findings as a block for the fleet page; a reader without access (or an API error) gets a
 * short note instead, so the fleet table never depends on it.
 */
export async function maintenanceBlock(): Promise<HTMLElement> {
  try {
    const findings = await getJson(arrayOf(MaintenanceFinding), '/maintenance');
    return h('section', { class: 'fleet-maintenance' }, h('h2', {}, `Calibration drift (${findings.length} open)`), findingsTable(findings), h('p', { class: 'small' }, h('a', { href: '#/maintenance' }, 'Maintenance & policy')));
  } catch (err) {
    return h('p', { class: 'small muted' }, `Calibration findings unavailable: ${(err as Error).message}`);
  }
}

/** Maintenance and policy: robots whose calibration drifts, how leads judged each flag kind, policy versions. */
export async function renderMaintenance(_ctx: AppContext): Promise<View> {
  const [findings, feedback, policies] = await Promise.all([
    getJson(arrayOf(MaintenanceFinding), '/maintenance'),
    getJson(one(FeedbackReport), '/feedback'),
    getJson(arrayOf(StoredPolicy), '/policies'),
  ]);
  const latest = [...new Map(policies.map((p) => [p.name, p])).values()];
  const changes = await Promise.all(latest.map((p) => getJson(policyChanges, `/policies/${encodeURIComponent(p.name)}/changes`)));
  const el = h(
    'section',
    { class: 'maintenance' },
    h('div', { class: 'page-head' }, h('h1', {}, 'Maintenance & policy'), h('p', { class: 'muted' }, `${findings.length} open calibration findings · feedback from reviews · ${policies.length} policy versions`)),
    h('h2', {}, 'Calibration drift'),
    findingsTable(findings),
    h('h2', {}, 'Review feedback'),
    feedbackTable(feedback),
    h('h2', {}, 'Policy versions'),
    policySection(policies, changes),
  );
  return { el };
}
