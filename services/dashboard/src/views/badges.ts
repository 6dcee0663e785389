import type { RunSummary, Severity, Verdict } from '@plumbline/contracts';
import { h } from '../dom.ts';
import { FLAG_KIND_LABEL, SEVERITY_STYLE, VERDICT_STYLE } from '../format.ts';
import { FlagKind } from '@plumbline/contracts';

/** Verdict as glyph + word on a tinted chip; the glyph and word carry the meaning, the colour only repeats it. */
export function verdictBadge(v: Verdict | null): HTMLElement {
  if (!v) return h('span', { class: 'badge badge-none' }, '… pending');
  const s = VERDICT_STYLE[v];
  return h('span', { class: `badge verdict-${v}` }, h('span', { 'aria-hidden': 'true' }, s.glyph), ` ${s.label}`);
}

export function severityBadge(sev: Severity | null): HTMLElement {
  if (!sev) return h('span', { class: 'sev sev-none' }, '— none');
  const s = SEVERITY_STYLE[sev];
  return h('span', { class: `sev sev-${sev}` }, h('span', { 'aria-hidden': 'true' }, s.glyph), ` ${s.label}`);
}

export function flagKindLabel(kind: string): string {
  const parsed = FlagKind.safeParse(kind);
  return parsed.success ? FLAG_KIND_LABEL[parsed.data] : kind;
}

export function flagCountChips(run: RunSummary): HTMLElement {
  const entries = Object.entries(run.flag_counts).filter(([, n]) => n > 0);
  if (entries.length === 0) return h('span', { class: 'muted' }, 'none');
  return h('span', { class: 'chips' }, ...entries.map(([k, n]) => h('span', { class: 'chip' }, `${flagKindLabel(k)} ×${n}`)));
}

/** Small trend of scores, oldest first, as an inline SVG (a handful of points; SVG stays light here). */
export function sparkline(values: readonly number[], width = 120, height = 28): SVGSVGElement {
  const ns = 'http://www.w3.org/2000/svg';
  const svg = document.createElementNS(ns, 'svg');
  svg.setAttribute('width', String(width));
  svg.setAttribute('height', String(height));
  svg.setAttribute('viewBox', `0 0 ${width} ${height}`);
  svg.setAttribute('class', 'sparkline');
  svg.setAttribute('role', 'img');
  svg.setAttribute('aria-label', values.length ? `recent scores ${values.map((v) => v.toFixed(0)).join(', ')}` : 'no scores yet');
  if (values.length === 0) return svg;
  // Score axis fixed 0–100 so robots compare at a glance.
  const y = (v: number): number => 2 + (height - 4) * (1 - v / 100);
  const x = (i: number): number => (values.length === 1 ? width / 2 : 3 + ((width - 6) * i) / (values.length - 1));
  const path = document.createElementNS(ns, 'path');
  path.setAttribute('d', values.map((v, i) => `${i === 0 ? 'M' : 'L'}${x(i).toFixed(1)},${y(v).toFixed(1)}`).join(' '));
  path.setAttribute('class', 'spark-line');
  const last = document.createElementNS(ns, 'circle');
  last.setAttribute('cx', x(values.length - 1).toFixed(1));
  last.setAttribute('cy', y(values[values.length - 1]!).toFixed(1));
  last.setAttribute('r', '2.5');
  last.setAttribute('class', 'spark-last');
  svg.append(path, last);
  return svg;
}
