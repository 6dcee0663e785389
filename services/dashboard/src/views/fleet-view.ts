import type { RobotSummary } from '@plumbline/contracts';
import type { AppContext, View } from '../app-context.ts';
import { h } from '../dom.ts';
import { fmtTimestamp } from '../format.ts';
import { severityBadge, sparkline, verdictBadge } from './badges.ts';
import { maintenanceBlock } from './maintenance-view.ts';

/**
 * Latest score against the mean of the earlier ones (oldest first): more than 5 points up or down counts as a
 * change. One dip in the middle of good runs does not make a robot "worsening" if its latest run is fine again.
 */
export function scoreTrend(scores: readonly number[]): 'improving' | 'worsening' | 'steady' | 'none' {
  if (scores.length < 2) return 'none';
  const earlier = scores.slice(0, -1);
  const delta = scores[scores.length - 1]! - earlier.reduce((a, b) => a + b, 0) / earlier.length;
  return delta > 5 ? 'improving' : delta < -5 ? 'worsening' : 'steady';
}

function robotRow(r: RobotSummary, open: (hash: string) => void): HTMLTableRowElement {
  const latest = r.latest_run;
  const scores = r.recent_scores;
  const trendText = { improving: '↗ improving', worsening: '↘ worsening', steady: '→ steady', none: '' }[scoreTrend(scores)];
  const tr = h(
    'tr',
    { 'data-robot': r.robot_id },
    h('th', { scope: 'row' }, h('a', { href: `#/queue?reviewed=all&robot_id=${encodeURIComponent(r.robot_id)}` }, r.robot_id)),
    h('td', {}, r.site ?? '—'),
    h('td', { class: 'num' }, String(r.runs)),
    h('td', {}, latest ? verdictBadge(latest.verdict) : '—'),
    h('td', {}, latest ? severityBadge(latest.worst_severity) : '—'),
    h('td', { class: 'num' }, latest?.score === null || latest?.score === undefined ? '—' : latest.score.toFixed(0)),
    h('td', {}, latest ? h('a', { href: `#/runs/${encodeURIComponent(latest.id)}` }, fmtTimestamp(latest.started_at ?? latest.received_at)) : '—'),
    h('td', { class: 'trend' }, sparkline(scores), h('span', { class: 'small muted' }, ` ${trendText}`)),
  );
  tr.addEventListener('dblclick', () => open(`#/queue?reviewed=all&robot_id=${encodeURIComponent(r.robot_id)}`));
  return tr;
}

/** Fleet health: one row per robot with its latest run and a sparkline of recent scores (oldest → newest). */
export async function renderFleet(ctx: AppContext): Promise<View> {
  const robots = await ctx.api.robots();
  robots.sort((a, b) => (a.latest_run?.score ?? 101) - (b.latest_run?.score ?? 101) || a.robot_id.localeCompare(b.robot_id));
  const body = h('tbody', {}, ...robots.map((r) => robotRow(r, ctx.navigate)));
  const el = h(
    'section',
    { class: 'fleet' },
    h('div', { class: 'page-head' }, h('h1', {}, 'Fleet'), h('p', { class: 'muted' }, `${robots.length} robots · lowest latest score first · trend over recent runs, score axis 0–100`)),
    robots.length
      ? h(
          'table',
          { class: 'runs fleet-table' },
          h('thead', {}, h('tr', {}, ...['Robot', 'Site', 'Runs', 'Latest verdict', 'Worst flag', 'Score', 'Latest run', 'Recent scores'].map((t) => h('th', { scope: 'col' }, t)))),
          body,
        )
      : h('p', { class: 'empty' }, 'No robot has uploaded a run yet.'),
    await maintenanceBlock(),
  );
  return { el };
}
