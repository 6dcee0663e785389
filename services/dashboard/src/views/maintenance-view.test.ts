import { describe, expect, it } from 'vitest';
import { precisionText, suggestionText } from './maintenance-view.ts';

describe('feedback wording', () => {
  it('states precision with its counts', () => {
    expect(precisionText({ upheld: 7, dismissed: 2, precision: 7 / 9 })).toBe('7 of 9 upheld (78 %)');
    expect(precisionText({ upheld: 0, dismissed: 0, precision: null })).toBe('no upheld or dismissed flags yet');
  });
  it('states a suggestion with its evidence, or the reason for none', () => {
    const base = { kind: 'time-offset' as const, current_warn: 20, unit: 'ms', target_dismissed_rate: 0.1, upheld_total: 9, dismissed_total: 6 };
    expect(suggestionText({ ...base, ok: true, reason: null, suggested_warn: 30, upheld_kept: 9, dismissed_kept: 1 })).toBe(
      'warn at 30 ms (now 20 ms): keeps 9 of 9 upheld and 1 of 6 dismissed flags (target ≤ 10 % dismissed)',
    );
    expect(suggestionText({ ...base, ok: false, reason: 'only 3 reviewed flags with a value', suggested_warn: null, upheld_kept: 0, dismissed_kept: 0 })).toBe(
      'no suggestion: only 3 reviewed flags with a value',
    );
  });
});
