import { FLAG_KINDS, type RunSummary, Verdict } from '@plumbline/contracts';
import type { RunFilter } from '../api-client.ts';
import type { AppContext, View } from '../app-context.ts';
import { h } from '../dom.ts';
import { VERDICT_STYLE, fmtDistance, fmtDuration, fmtTimestamp, DECISION_STYLE } from '../format.ts';
import { flagCountChips, flagKindLabel, severityBadge, verdictBadge } from './badges.ts';

const FILTER_KEYS = ['robot_id', 'site', 'verdict', 'flag_kind', 'reviewed', 'from', 'to', 'limit'] as const;
type FilterKey = (typeof FILTER_KEYS)[number];

/** Hash query (from the address bar) -> API filter. Dates are whole UTC days; `reviewed` defaults to the open queue. */
export function filterFromParams(p: URLSearchParams): RunFilter {
  const limit = Number(p.get('limit'));
  const f: RunFilter = { sort: 'priority', limit: Number.isInteger(limit) && limit >= 1 && limit <= 500 ? String(limit) : '50' };
  for (const k of ['robot_id', 'site', 'verdict', 'flag_kind'] as const) {
    const v = p.get(k);
    if (v) f[k] = v;
  }
  const reviewed = p.get('reviewed') ?? 'false';
  if (reviewed === 'true' || reviewed === 'false') f.reviewed = reviewed;
  if (reviewed !== 'false') f.sort = '-received_at';
  const from = p.get('from');
  const to = p.get('to');
  if (from && /^\d{4}-\d{2}-\d{2}$/.test(from)) f.started_after = `${from}T00:00:00Z`;
  if (to && /^\d{4}-\d{2}-\d{2}$/.test(to)) f.started_before = `${to}T23:59:59Z`;
  return f;
}

function select(name: FilterKey, label: string, current: string, options: [string, string][]): HTMLElement {
  const sel = h('select', { name, id: `f-${name}` }, ...options.map(([v, text]) => h('option', { value: v, selected: v === current }, text)));
  return h('label', { class: 'filter' }, h('span', {}, label), sel);
}

/** Counts of runs awaiting a decision, overall and per verdict; each is a link that applies that filter. */
async function loadCounts(ctx: AppContext, base: RunFilter, params: URLSearchParams): Promise<HTMLElement> {
  const common: RunFilter = { ...base, reviewed: 'false', limit: '1', sort: 'priority' };
  delete common.verdict;
  delete common.cursor;
  const verdicts = Verdict.options;
  const pages = await Promise.all([ctx.api.listRuns(common), ...verdicts.map((v) => ctx.api.listRuns({ ...common, verdict: v }))]);
  const href = (verdict: string | null): string => {
    const next = new URLSearchParams(params);
    next.delete('reviewed');
    if (verdict) next.set('verdict', verdict);
    else next.delete('verdict');
    return `#/queue${next.toString() ? `?${next.toString()}` : ''}`;
  };
  const cell = (label: HTMLElement | string, n: number | null | undefined, cls: string, verdict: string | null): HTMLElement =>
    h('a', { class: `count ${cls}`, href: href(verdict), title: 'Show these runs' }, h('span', { class: 'count-n' }, n === null || n === undefined ? '—' : String(n)), h('span', { class: 'count-label' }, label));
  return h(
    'nav',
    { class: 'counts', 'aria-label': 'Runs awaiting a decision' },
    cell('awaiting decision', pages[0]?.total, 'count-open', null),
    ...verdicts.map((v, i) => cell(h('span', {}, `${VERDICT_STYLE[v].glyph} ${VERDICT_STYLE[v].label}`), pages[i + 1]?.total, `verdict-${v}`, v)),
  );
}

function runRow(run: RunSummary, open: (id: string) => void): HTMLTableRowElement {
  const decision = run.decision ? `${DECISION_STYLE[run.decision].label} · ${fmtTimestamp(run.reviewed_at)}` : run.status === 'done' ? 'open' : run.status;
  const tr = h(
    'tr',
    { 'data-run': run.id, tabindex: '-1', 'aria-selected': 'false' },
    h('td', {}, severityBadge(run.worst_severity)),
    h('td', {}, verdictBadge(run.verdict)),
    h('td', { class: 'num' }, run.score === null ? '—' : run.score.toFixed(0)),
    h('td', { class: 'nowrap' }, h('a', { href: `#/runs/${encodeURIComponent(run.id)}` }, run.robot_id), h('div', { class: 'muted small' }, run.run_id)),
    h('td', { class: 'nowrap' }, run.site),
    h('td', { class: 'nowrap' }, fmtTimestamp(run.started_at ?? run.received_at)),
    h('td', { class: 'num' }, fmtDuration(run.duration_s)),
    h('td', { class: 'num' }, fmtDistance(run.distance_m)),
    h('td', {}, flagCountChips(run)),
    h('td', {}, decision),
  );
  tr.addEventListener('click', (ev) => {
    if ((ev.target as HTMLElement).tagName !== 'A') open(run.id);
  });
  return tr;
}

/** The review queue: runs needing a decision first (worst severity, then most recent), filters, counts, j/k/Enter. */
export async function renderQueue(ctx: AppContext, params: URLSearchParams): Promise<View> {
  const filter = filterFromParams(params);
  ctx.queueHash = `#/queue${params.toString() ? `?${params.toString()}` : ''}`;
  const [page, robots, counts] = await Promise.all([ctx.api.listRuns(filter), ctx.api.robots(), loadCounts(ctx, filter, params)]);
  const runs = [...page.items];
  ctx.queue = runs.map((r) => r.id);
  const sites = [...new Set(robots.map((r) => r.site).filter((s): s is string => !!s))].sort();

  const form = h(
    'form',
    { class: 'filters', 'aria-label': 'Filter runs' },
    select('reviewed', 'Show', params.get('reviewed') ?? 'false', [['false', 'awaiting decision'], ['true', 'decided'], ['all', 'all runs']]),
    select('robot_id', 'Robot', params.get('robot_id') ?? '', [['', 'all robots'], ...robots.map((r): [string, string] => [r.robot_id, r.robot_id])]),
    select('site', 'Site', params.get('site') ?? '', [['', 'all sites'], ...sites.map((s): [string, string] => [s, s])]),
    select('verdict', 'Verdict', params.get('verdict') ?? '', [['', 'any verdict'], ...Verdict.options.map((v): [string, string] => [v, `${VERDICT_STYLE[v].glyph} ${v}`])]),
    select('flag_kind', 'Flag', params.get('flag_kind') ?? '', [['', 'any flag'], ...FLAG_KINDS.map((k): [string, string] => [k, flagKindLabel(k)])]),
    h('label', { class: 'filter' }, h('span', {}, 'Started from'), h('input', { type: 'date', name: 'from', value: params.get('from') ?? '' })),
    h('label', { class: 'filter' }, h('span', {}, 'to'), h('input', { type: 'date', name: 'to', value: params.get('to') ?? '' })),
  );
  form.addEventListener('change', () => {
    const next = new URLSearchParams();
    for (const k of FILTER_KEYS) {
      const el = form.elements.namedItem(k) as HTMLInputElement | HTMLSelectElement | null;
      const value = el ? el.value : params.get(k); // page size has no control; it stays as given in the address
      if (value && !(k === 'reviewed' && value === 'false')) next.set(k, value);
    }
    ctx.navigate(`#/queue${next.toString() ? `?${next.toString()}` : ''}`);
  });

  const tbody = h('tbody');
  const open = (id: string): void => ctx.navigate(`#/runs/${encodeURIComponent(id)}`);
  for (const r of runs) tbody.append(runRow(r, open));
  const more = h('button', { type: 'button', class: 'secondary load-more', hidden: !page.next_cursor }, 'Load more runs');
  let cursor = page.next_cursor;
  more.addEventListener('click', async () => {
    if (!cursor) return;
    const next = await ctx.api.listRuns({ ...filter, cursor });
    for (const r of next.items) {
      runs.push(r);
      ctx.queue.push(r.id);
      tbody.append(runRow(r, open));
    }
    cursor = next.next_cursor;
    more.hidden = !cursor;
  });

  const table = h(
    'table',
    { class: 'runs' },
    h('thead', {}, h('tr', {}, ...['Worst flag', 'Verdict', 'Score', 'Robot / run', 'Site', 'Started', 'Duration', 'Distance', 'Flags', 'Decision'].map((t) => h('th', { scope: 'col' }, t)))),
    tbody,
  );
  const empty = h('p', { class: 'empty' }, filter.reviewed === 'false' ? 'Nothing awaits a decision with these filters.' : 'No runs match these filters.');
  const el = h(
    'section',
    { class: 'queue' },
    h('div', { class: 'page-head' }, h('h1', {}, 'Review queue'), h('p', { class: 'muted' }, `${page.total ?? runs.length} runs · j/k to move, Enter to open, ? for keys`)),
    counts,
    form,
    runs.length ? table : empty,
    more,
  );

  let sel = Math.max(0, runs.findIndex((r) => r.id === lastOpened));
  const highlight = (): void => {
    tbody.querySelectorAll('tr').forEach((tr, i) => tr.setAttribute('aria-selected', String(i === sel)));
    const row = tbody.children[sel] as HTMLElement | undefined;
    row?.scrollIntoView({ block: 'nearest' });
  };
  if (runs.length) queueMicrotask(highlight);
  return {
    el,
    onKey(ev) {
      if (!runs.length) return false;
      if (ev.key === 'j' || ev.key === 'ArrowDown') sel = Math.min(sel + 1, runs.length - 1);
      else if (ev.key === 'k' || ev.key === 'ArrowUp') sel = Math.max(sel - 1, 0);
      else if (ev.key === 'Enter' || ev.key === 'o') {
        lastOpened = runs[sel]!.id;
        open(lastOpened);
        return true;
      } else return false;
      highlight();
      return true;
    },
  };
}

let lastOpened = '';

/** Remember the run opened last so coming back to the queue keeps the place. */
export function rememberOpened(id: string): void {
  lastOpened = id;
}

