import type { Report, Review, RunDetail, RunDecision } from '@plumbline/contracts';
import { createTimeCursor } from '../charts/cursor.ts';
import { createMapView } from '../charts/map-view.ts';
import type { AppContext, View } from '../app-context.ts';
import { h } from '../dom.ts';
import { DECISION_STYLE, fmtDistance, fmtDuration, fmtTimestamp } from '../format.ts';
import { severityBadge, verdictBadge } from './badges.ts';
import { renderEstimates } from './estimates.ts';
import { renderIntegrity } from './integrity.ts';
import { filterFromParams, rememberOpened } from './queue-view.ts';
import { createDraft } from './review-draft.ts';
import { renderReviewPanel, trimSummary } from './review-panel.ts';
import { renderFlagList } from './run-flags.ts';
import { renderPlots } from './run-plots.ts';

const CAUTION =
  'The verdict is decision support. Site safety procedures and the standards that apply to mobile robots at this site decide whether a map is put to use.';

function legend(report: Report): HTMLElement {
  const item = (swatch: string, text: string): HTMLElement => h('li', {}, h('span', { class: `lg lg-${swatch}`, 'aria-hidden': 'true' }), text);
  return h(
    'ul',
    { class: 'legend', 'aria-label': 'Map legend' },
    item('odom', `odometry path (${report.series.trajectory.frame})`),
    report.series.repaired_trajectory ? item('repaired', `repaired path, dashed (${report.series.repaired_trajectory.frame})`) : null,
    report.series.gnss_fixes ? item('gnss', `GNSS fix: ■ RTK fixed, ○ other (${report.series.gnss_fixes.frame})`) : null,
    item('loop', 'loop used'),
    item('loop-rejected', '✕ loop rejected (dashed)'),
    item('warn', '▲ warning stretch (long dashes)'),
    item('critical', '◆ critical stretch (dots)'),
  );
}

function downloads(ctx: AppContext, detail: RunDetail): HTMLElement | null {
  if (!detail.report) return null;
  const s = detail.summary;
  const button = (variant: 'repaired' | 'original'): HTMLElement =>
    h('button', {
      type: 'button',
      class: 'link',
      onclick: async () => {
        try {
          const blob = await ctx.api.trajectoryCsv(s.id, variant);
          const a = h('a', { href: URL.createObjectURL(blob), download: `${s.robot_id}_${s.run_id}_${variant}.csv` });
          a.click();
          setTimeout(() => URL.revokeObjectURL(a.href), 10_000);
        } catch (err) {
          ctx.announce(`Download failed: ${err instanceof Error ? err.message : String(err)}`, 'error');
        }
      },
    }, variant);
  return h('p', { class: 'small downloads' }, 'Trajectory CSV: ', button('repaired'), ' · ', button('original'));
}

function header(detail: RunDetail): HTMLElement {
  const s = detail.summary;
  const decided = s.decision ? `${DECISION_STYLE[s.decision].label} (${fmtTimestamp(s.reviewed_at)})` : 'awaiting decision';
  return h(
    'div',
    { class: 'run-head' },
    h('h1', {}, `${s.robot_id} · ${s.run_id}`),
    h(
      'dl',
      { class: 'facts' },
      h('dt', {}, 'Verdict'), h('dd', {}, verdictBadge(s.verdict)),
      h('dt', {}, 'Score'), h('dd', {}, s.score === null ? '—' : `${s.score.toFixed(0)} / 100`),
      h('dt', {}, 'Worst'), h('dd', {}, severityBadge(s.worst_severity)),
      h('dt', {}, 'Site'), h('dd', {}, s.site),
      h('dt', {}, 'Started'), h('dd', {}, fmtTimestamp(s.started_at)),
      h('dt', {}, 'Duration'), h('dd', {}, fmtDuration(s.duration_s)),
      h('dt', {}, 'Distance'), h('dd', {}, fmtDistance(s.distance_m)),
      h('dt', {}, 'Status'), h('dd', { class: 'run-decision' }, decided),
    ),
  );
}

/** The run page: map + linked plots on the left; caution, flags and review on the right; estimates below. */
export async function renderRun(ctx: AppContext, id: string): Promise<View> {
  rememberOpened(id);
  const [detail, audit] = await Promise.all([ctx.api.run(id), ctx.api.audit(id).catch(() => []), loadQueueIfEmpty(ctx)]);
  const report = detail.report;
  const caution = h('p', { class: 'caution', role: 'note' }, h('strong', {}, '⚠ Caution: '), CAUTION);
  const pos = ctx.queue.indexOf(id);
  const step = (d: number): boolean => {
    const next = ctx.queue[pos + d];
    if (pos < 0 || !next) {
      ctx.announce(d > 0 ? 'End of the queue.' : 'Start of the queue.');
      return true;
    }
    ctx.navigate(`#/runs/${encodeURIComponent(next)}`);
    return true;
  };
  const where = pos >= 0 ? `run ${pos + 1} of ${ctx.queue.length} in the queue` : 'not in the current queue';
  const nav = h('p', { class: 'muted small run-nav' }, h('a', { href: ctx.queueHash }, '← queue'), ` · ${where} · j/k next/previous · ? keys`);

  let el: HTMLElement = h('section');
  const draft = createDraft(report ? report.flags.map((f) => f.id) : [], detail.reviews[detail.reviews.length - 1] ?? null);
  const onSaved = (r: Review): void => {
    const dd = el.querySelector('.run-decision');
    if (dd) dd.textContent = `${DECISION_STYLE[r.decision].label} (${fmtTimestamp(r.created_at)})`;
    ctx.announce(`Review saved: ${detail.summary.robot_id} · ${detail.summary.run_id}`);
  };
  const trim = report ? trimSummary(report.segments, report.run.distance_m) : null;
  const panel = renderReviewPanel(ctx, id, draft, { reviews: detail.reviews, audit }, trim, onSaved);
  if (!report) {
    const why = detail.summary.status_reason ? `: ${detail.summary.status_reason}` : '';
    el = h('section', { class: 'run' }, nav, header(detail), caution, h('p', { class: 'card' }, `No report yet (status ${detail.summary.status}${why}).`), panel.el);
    return { el, onKey: (ev) => runKeys(ev, { step, panel, flags: null, back: () => ctx.navigate(ctx.queueHash), nudge: () => false }) };
  }

  const cursor = createTimeCursor();
  const flags = renderFlagList(report.flags, draft, cursor);
  const mapHeight = Math.round(Math.min(460, Math.max(300, window.innerHeight * 0.42)));
  const mapCard = h('section', { class: 'card map-card' }, h('h2', {}, 'Map ', h('span', { class: 'muted small' }, '(top-down · drag to pan, wheel to zoom, double-click to fit)')), createMapView(report, cursor, mapHeight), legend(report));
  const plotCard = h('section', { class: 'card' }, h('h2', {}, 'Signals over run time ', h('span', { class: 'muted small' }, '(hover or click to follow one moment on the map and every plot; hatched = flagged)')), renderPlots(report, cursor));
  const side = h('aside', { class: 'run-side' }, caution, h('section', { class: 'card' }, h('h2', {}, `Flags (${report.flags.length})`), flags.el), panel.el, renderEstimates(report), renderIntegrity(report), downloads(ctx, detail));
  el = h('section', { class: 'run' }, nav, header(detail), h('div', { class: 'run-grid' }, h('div', { class: 'run-main' }, mapCard, plotCard), side));
  const nudge = (dir: number, coarse: boolean): boolean => {
    const d = report.run.duration_s;
    const t = cursor.state.pinnedT ?? cursor.state.hoverT ?? 0;
    cursor.set({ pinnedT: Math.min(Math.max(t + dir * d * (coarse ? 0.05 : 0.01), 0), d) });
    return true;
  };
  return { el, onKey: (ev) => runKeys(ev, { step, panel, flags, back: () => ctx.navigate(ctx.queueHash), nudge }) };
}

/** A run opened straight from a link still gets j/k: load the default queue (open runs by priority) once. */
async function loadQueueIfEmpty(ctx: AppContext): Promise<void> {
  if (ctx.queue.length > 0) return;
  try {
    const page = await ctx.api.listRuns(filterFromParams(new URLSearchParams()));
    ctx.queue = page.items.map((r) => r.id);
  } catch {
    // The run page works without queue order; j/k then report the end of the queue.
  }
}

interface RunKeyTargets {
  step(d: number): boolean;
  panel: ReturnType<typeof renderReviewPanel>;
  flags: ReturnType<typeof renderFlagList> | null;
  back(): void;
  /** Move the pinned time cursor by 1 % of the run (5 % with Shift). */
  nudge(dir: number, coarse: boolean): boolean;
}

const DECISION_KEYS = new Map<string, RunDecision>(Object.entries(DECISION_STYLE).map(([d, s]) => [s.key, d as RunDecision]));

function runKeys(ev: KeyboardEvent, t: RunKeyTargets): boolean {
  if ((ev.ctrlKey || ev.metaKey) && ev.key === 'Enter') {
    void t.panel.save();
    return true;
  }
  const decision = DECISION_KEYS.get(ev.key);
  if (decision) {
    t.panel.setDecision(decision);
    return true;
  }
  const flags = t.flags;
  switch (ev.key) {
    case 'j':
      return t.step(1);
    case 'k':
      return t.step(-1);
    case 's':
      void t.panel.save();
      return true;
    case 'ArrowLeft':
      return t.nudge(-1, ev.shiftKey);
    case 'ArrowRight':
      return t.nudge(1, ev.shiftKey);
    case 'Backspace':
      t.back();
      return true;
    case ']':
      flags?.select(flags.selected() + 1);
      return true;
    case '[':
      flags?.select(flags.selected() - 1);
      return true;
    case 'u':
      flags?.setDisposition('upheld');
      return true;
    case 'd':
      flags?.setDisposition('dismissed');
      return true;
    case 'e':
      flags?.setDisposition('rerun-needed');
      return true;
    default:
      return false;
  }
}
