import type { Flag, FlagDisposition } from '@plumbline/contracts';
import type { TimeCursor } from '../charts/cursor.ts';
import { h } from '../dom.ts';
import { SEVERITY_STYLE, fmtDuration, fmtMeasured } from '../format.ts';
import { flagKindLabel } from './badges.ts';
import { DISPOSITIONS, type ReviewDraft } from './review-draft.ts';

export interface FlagList {
  el: HTMLElement;
  /** Select flag by index (wraps); -1 clears. Selecting shows its interval on the map and plots. */
  select(i: number): void;
  selected(): number;
  setDisposition(d: FlagDisposition): void;
}

const SEV_ORDER = { critical: 0, warn: 1, info: 2 } as const;

/**
 * Flags, worst first then in time order, with their plain-language message, measured vs threshold, what to check
 * and a disposition. Info notes sit in a collapsed group so warnings and critical findings lead.
 */
export function renderFlagList(all: readonly Flag[], draft: ReviewDraft, cursor: TimeCursor): FlagList {
  const flags = [...all].sort((a, b) => SEV_ORDER[a.severity] - SEV_ORDER[b.severity] || a.t_start - b.t_start);
  let sel = -1;
  const items: HTMLElement[] = [];
  const selects = new Map<string, HTMLSelectElement>();
  const list = h('ol', { class: 'flags' });
  const infoList = h('ol', { class: 'flags' });
  const infoCount = flags.filter((f) => f.severity === 'info').length;
  const infoGroup = h('details', { class: 'info-flags' }, h('summary', {}, `Info notes (${infoCount})`), infoList);
  flags.forEach((f, i) => {
    const entry = draft.flags.get(f.id)!;
    const s = SEVERITY_STYLE[f.severity];
    const sel = h('select', { 'aria-label': `Disposition of ${f.id}`, name: `disp-${f.id}` }, h('option', { value: '' }, '— not reviewed'), ...DISPOSITIONS.map((d) => h('option', { value: d.value }, `${d.label} (${d.key})`)));
    sel.value = entry.disposition ?? '';
    sel.addEventListener('change', () => (entry.disposition = (sel.value || null) as FlagDisposition | null));
    selects.set(f.id, sel);
    const note = h('input', { type: 'text', placeholder: 'note on this flag', 'aria-label': `Note on ${f.id}`, maxlength: 4000 });
    note.value = entry.note;
    note.addEventListener('input', () => (entry.note = note.value));
    const li = h(
      'li',
      { class: `flag flag-${f.severity}`, 'data-flag': f.id, tabindex: '-1' },
      h(
        'div',
        { class: 'flag-head' },
        h('span', { class: `sev sev-${f.severity}` }, h('span', { 'aria-hidden': 'true' }, s.glyph), ` ${s.label}`),
        h('button', { type: 'button', class: 'link flag-id', title: 'Show on map and plots' }, f.id),
        h('span', { class: 'muted' }, flagKindLabel(f.kind)),
        h('span', { class: 'muted small when' }, `${fmtDuration(f.t_start)}–${fmtDuration(f.t_end)} · ${f.distance_start_m.toFixed(0)}–${f.distance_end_m.toFixed(0)} m`),
      ),
      h('p', { class: 'flag-msg' }, f.message),
      h('p', { class: 'flag-measure' }, h('strong', {}, 'Measured '), fmtMeasured(f.value, f.threshold, f.unit)),
      h('p', { class: 'flag-check small' }, h('strong', {}, 'Check on the robot: '), f.check),
      h('div', { class: 'flag-review' }, sel, note),
    );
    li.querySelector('.flag-id')?.addEventListener('click', () => api.select(i));
    items.push(li);
    (f.severity === 'info' ? infoList : list).append(li);
  });
  const body = h('div', { class: 'flag-groups' }, list.childElementCount ? list : h('p', { class: 'muted small' }, 'No warnings or critical findings.'), infoCount ? infoGroup : null);

  const api: FlagList = {
    el: flags.length ? body : h('p', { class: 'empty' }, 'No flags: nothing above the thresholds of the policy.'),
    select(i) {
      sel = flags.length === 0 || i < 0 ? -1 : ((i % flags.length) + flags.length) % flags.length;
      items.forEach((li, k) => li.classList.toggle('selected', k === sel));
      const f = sel >= 0 ? flags[sel] : undefined;
      cursor.set(f ? { range: { t0: f.t_start, t1: f.t_end, label: f.id }, pinnedT: (f.t_start + f.t_end) / 2 } : { range: null });
      if (f?.severity === 'info') infoGroup.open = true;
      if (f) items[sel]?.scrollIntoView({ block: 'nearest' });
    },
    selected: () => sel,
    setDisposition(d) {
      const f = flags[sel];
      if (!f) return;
      draft.flags.get(f.id)!.disposition = d;
      const s = selects.get(f.id);
      if (s) s.value = d;
    },
  };
  return api;
}
