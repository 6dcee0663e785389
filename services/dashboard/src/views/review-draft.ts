import { FlagDisposition, type Review, type ReviewInput, type RunDecision } from '@plumbline/contracts';

/** The review being written on a run page: the run decision plus one optional disposition per flag. */
export interface ReviewDraft {
  decision: RunDecision | null;
  note: string;
  flags: Map<string, { disposition: FlagDisposition | null; note: string }>;
}

/**
 * A fresh draft. Flag dispositions (and their notes) of the latest earlier review carry over, so a second look
 * starts where the first stopped; the run decision never does — it must be chosen again on purpose.
 */
export function createDraft(flagIds: readonly string[], previous: Review | null = null): ReviewDraft {
  const carried = new Map((previous?.flags ?? []).map((f) => [f.flag_id, f]));
  return {
    decision: null,
    note: '',
    flags: new Map(flagIds.map((id) => [id, { disposition: carried.get(id)?.disposition ?? null, note: carried.get(id)?.note ?? '' }])),
  };
}

/** Draft -> API body. Flags without a disposition are left out; a decision is required. */
export function draftToInput(d: ReviewDraft): { ok: true; input: ReviewInput } | { ok: false; reason: string } {
  if (!d.decision) return { ok: false, reason: 'Choose a decision first (a, t, r or n).' };
  const flags: ReviewInput['flags'] = [];
  for (const [flag_id, f] of d.flags) {
    if (!f.disposition) continue;
    flags.push(f.note.trim() ? { flag_id, disposition: f.disposition, note: f.note.trim() } : { flag_id, disposition: f.disposition });
  }
  return { ok: true, input: { decision: d.decision, note: d.note.trim(), flags } };
}

export const DISPOSITIONS: { value: FlagDisposition; key: string; label: string }[] = [
  { value: 'upheld', key: 'u', label: 'Upheld' },
  { value: 'dismissed', key: 'd', label: 'Dismissed' },
  { value: 'rerun-needed', key: 'e', label: 'Rerun needed' },
];
