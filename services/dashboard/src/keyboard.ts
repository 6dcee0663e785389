import { h } from './dom.ts';

/** One line of the help overlay; the same table documents the shortcuts each view handles. */
export interface Shortcut {
  keys: string;
  what: string;
}

export const SHORTCUTS: Record<'anywhere' | 'queue' | 'run', Shortcut[]> = {
  anywhere: [
    { keys: '?', what: 'show or hide this help' },
    { keys: 'g q', what: 'go to the review queue' },
    { keys: 'g f', what: 'go to the fleet page' },
    { keys: 'Esc', what: 'close help / leave a text box' },
  ],
  queue: [
    { keys: 'j / ↓', what: 'next run' },
    { keys: 'k / ↑', what: 'previous run' },
    { keys: 'Enter / o', what: 'open the selected run' },
  ],
  run: [
    { keys: 'j / k', what: 'next / previous run of the queue' },
    { keys: 'a', what: 'decision: accept' },
    { keys: 't', what: 'decision: accept trimmed (cut flagged stretches)' },
    { keys: 'r', what: 'decision: reject' },
    { keys: 'n', what: 'decision: drive the route again' },
    { keys: 's / Ctrl+Enter', what: 'save the review' },
    { keys: '[ / ]', what: 'select previous / next flag' },
    { keys: 'u / d / e', what: 'selected flag: upheld / dismissed / rerun needed' },
    { keys: '← / →', what: 'move the time cursor by 1 % of the run (Shift: 5 %)' },
    { keys: 'Backspace', what: 'back to the queue' },
  ],
};

/** True when the key went to a text field, where single-letter shortcuts must not fire. */
export function isTyping(ev: KeyboardEvent): boolean {
  const el = ev.target as HTMLElement | null;
  if (!el) return false;
  const tag = el.tagName;
  return tag === 'TEXTAREA' || tag === 'SELECT' || (tag === 'INPUT' && !['radio', 'checkbox', 'button'].includes((el as HTMLInputElement).type)) || el.isContentEditable;
}

export function createHelpOverlay(): { el: HTMLElement; toggle(force?: boolean): void; open(): boolean } {
  const table = (title: string, rows: Shortcut[]): HTMLElement =>
    h('section', {}, h('h3', {}, title), h('dl', {}, ...rows.flatMap((r) => [h('dt', {}, h('kbd', {}, r.keys)), h('dd', {}, r.what)])));
  const el = h(
    'div',
    { class: 'help-overlay', role: 'dialog', 'aria-modal': 'true', 'aria-label': 'Keyboard shortcuts', hidden: true },
    h(
      'div',
      { class: 'help-card' },
      h('h2', {}, 'Keyboard shortcuts'),
      h('div', { class: 'help-grid' }, table('Anywhere', SHORTCUTS.anywhere), table('Review queue', SHORTCUTS.queue), table('Run page', SHORTCUTS.run)),
      h('p', { class: 'muted' }, 'Press ? or Esc to close.'),
    ),
  );
  el.addEventListener('click', (ev) => {
    if (ev.target === el) el.hidden = true;
  });
  return {
    el,
    toggle(force) {
      el.hidden = force === undefined ? !el.hidden : !force;
    },
    open: () => !el.hidden,
  };
}
