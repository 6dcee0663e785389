import { RunDecision, type AuditEntry, type Review, type Segment } from '@plumbline/contracts';
import type { AppContext } from '../app-context.ts';
import { h, mount } from '../dom.ts';
import { DECISION_STYLE, fmtDuration, fmtTimestamp } from '../format.ts';
import { draftToInput, type ReviewDraft } from './review-draft.ts';

export interface ReviewPanel {
  el: HTMLElement;
  setDecision(d: RunDecision): void;
  save(): Promise<void>;
}

function reviewItem(r: Review): HTMLElement {
  return h(
    'li',
    { 'data-review': String(r.id) },
    h('strong', {}, DECISION_STYLE[r.decision].label),
    ` by ${r.reviewer} · ${fmtTimestamp(r.created_at)}`,
    r.note ? h('div', { class: 'small' }, r.note) : null,
    r.flags.length ? h('div', { class: 'small muted' }, r.flags.map((f) => `${f.flag_id}: ${f.disposition}${f.note ? ` (${f.note})` : ''}`).join(' · ')) : null,
  );
}

function auditItem(a: AuditEntry): HTMLElement {
  const detail = Object.entries(a.detail)
    .filter(([, v]) => v !== null && typeof v !== 'object')
    .map(([k, v]) => `${k}: ${String(v)}`)
    .join(', ');
  return h('li', {}, h('span', { class: 'mono small' }, fmtTimestamp(a.at)), ` ${a.actor} — ${a.action}`, detail ? h('span', { class: 'muted small' }, ` (${detail})`) : null);
}

/**
 * What a trimmed merge would cut: the warning and critical segments, with the share of the path that stays.
 * Info-only segments are not cut (they carry no finding that makes the map wrong).
 */
export function trimSummary(segments: readonly Segment[], distanceM: number): string {
  const cut = segments.filter((s) => s.severity !== 'info');
  if (cut.length === 0) return 'Trimmed merge: no warning or critical segment to cut; this equals accepting the run.';
  const cutM = cut.reduce((m, s) => m + Math.max(0, s.distance_end_m - s.distance_start_m), 0);
  const kept = distanceM > 0 ? Math.max(0, 100 * (1 - cutM / distanceM)) : 0;
  const list = cut.map((s) => `${fmtDuration(s.t_start)}–${fmtDuration(s.t_end)}`).join(', ');
  return `Trimmed merge cuts ${cut.length} segment${cut.length > 1 ? 's' : ''} (${list}); ${kept.toFixed(0)} % of the ${distanceM.toFixed(0)} m path stays.`;
}

/** Decision, note and save; then the run's previous reviews and its audit history (both reloaded after saving). */
export function renderReviewPanel(
  ctx: AppContext,
  runId: string,
  draft: ReviewDraft,
  history: { reviews: Review[]; audit: AuditEntry[] },
  trim: string | null,
  onSaved: (r: Review) => void = () => {},
): ReviewPanel {
  const { reviews, audit } = history;
  const trimNote = h('p', { class: 'small trim-note', hidden: true }, trim ?? '');
  const showTrim = (d: RunDecision): void => {
    trimNote.hidden = !(d === 'accept-trimmed' && trim);
  };
  const radios = new Map<RunDecision, HTMLInputElement>();
  const choices = h(
    'fieldset',
    { class: 'decisions' },
    h('legend', {}, 'Decision on the run'),
    ...RunDecision.options.map((d) => {
      const input = h('input', { type: 'radio', name: 'decision', value: d, id: `decision-${d}` });
      input.addEventListener('change', () => {
        draft.decision = d;
        showTrim(d);
      });
      radios.set(d, input);
      return h('label', { for: `decision-${d}`, class: 'decision' }, input, ` ${DECISION_STYLE[d].label} `, h('kbd', {}, DECISION_STYLE[d].key));
    }),
  );
  const note = h('textarea', { name: 'note', rows: 2, maxlength: 4000, placeholder: 'Note for the record (optional)', 'aria-label': 'Review note' });
  note.addEventListener('input', () => (draft.note = note.value));
  const result = h('p', { class: 'save-result', role: 'status', 'aria-live': 'polite' });
  const saveBtn = h('button', { type: 'submit', class: 'primary' }, 'Save review ', h('kbd', {}, 's'));
  const reviewList = h('ul', { class: 'reviews' });
  const auditList = h('ul', { class: 'audit' });
  const showHistory = (rs: Review[], as: AuditEntry[]): void => {
    mount(reviewList, ...(rs.length ? rs.map(reviewItem) : [h('li', { class: 'muted' }, 'No reviews yet.')]));
    mount(auditList, ...(as.length ? as.map(auditItem) : [h('li', { class: 'muted' }, 'No audit entries.')]));
  };
  showHistory(reviews, audit);

  let saving = false;
  async function save(): Promise<void> {
    if (saving) return;
    const body = draftToInput(draft);
    if (!body.ok) {
      result.textContent = body.reason;
      result.dataset.kind = 'error';
      return;
    }
    saving = true;
    saveBtn.disabled = true;
    try {
      const saved = await ctx.api.postReview(runId, body.input);
      result.textContent = `✓ Saved review #${saved.id}: ${DECISION_STYLE[saved.decision].label}. Press j for the next run.`;
      result.dataset.kind = 'ok';
      onSaved(saved);
      const [rs, as] = await Promise.all([ctx.api.run(runId).then((d) => d.reviews), ctx.api.audit(runId)]);
      showHistory(rs, as);
    } catch (err) {
      result.textContent = `✕ Not saved: ${err instanceof Error ? err.message : String(err)}`;
      result.dataset.kind = 'error';
    } finally {
      saving = false;
      saveBtn.disabled = false;
    }
  }

  const form = h('form', { class: 'review-form', 'aria-label': 'Review' }, choices, trimNote, note, h('div', { class: 'row' }, saveBtn, result));
  form.addEventListener('submit', (ev) => {
    ev.preventDefault();
    void save();
  });
  const el = h(
    'section',
    { class: 'review card' },
    h('h2', {}, 'Review'),
    form,
    h('details', { open: reviews.length > 0 }, h('summary', {}, 'Previous reviews'), reviewList),
    h('details', {}, h('summary', {}, 'Audit history'), auditList),
  );
  return {
    el,
    setDecision(d) {
      draft.decision = d;
      showTrim(d);
      const r = radios.get(d);
      if (r) r.checked = true;
    },
    save,
  };
}
