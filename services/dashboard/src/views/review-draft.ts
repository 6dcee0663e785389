import { FlagDisposition, type ReviewInput, type RunDecision } from '@plumbline/contracts';

/** The review being written on a run page: the run decision plus one optional disposition per flag. */
export interface ReviewDraft {
  decision: RunDecision | null;
  note: string;
  flags: Map<string, { disposition: FlagDisposition | null; note: string }>;
}

export function createDraft(flagIds: readonly string[]): ReviewDraft {
  return { decision: null, note: '', flags: new Map(flagIds.map((id) => [id, { disposition: null, note: '' }])) };
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
