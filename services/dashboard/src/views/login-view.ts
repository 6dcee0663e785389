import type { View } from '../app-context.ts';
import { h } from '../dom.ts';

/** Token box: the lead token printed by `npm start` (or issued by an admin); kept in localStorage. */
export function renderLogin(submit: (token: string) => Promise<void>): View {
  const input = h('input', { id: 'token', name: 'token', type: 'password', autocomplete: 'off', required: true, spellcheck: 'false', size: 48 });
  const err = h('p', { class: 'form-error', role: 'alert' });
  const form = h(
    'form',
    { class: 'login card' },
    h('h1', {}, 'Sign in'),
    h('p', {}, 'Paste your access token. Leads get one from the service operator; a local demo prints a lead token on start-up.'),
    h('label', { for: 'token' }, 'Access token'),
    input,
    h('button', { type: 'submit', class: 'primary' }, 'Sign in'),
    err,
  );
  form.addEventListener('submit', (ev) => {
    ev.preventDefault();
    err.textContent = '';
    submit(input.value.trim()).catch((e: unknown) => {
      err.textContent = e instanceof Error ? e.message : String(e);
    });
  });
  queueMicrotask(() => input.focus());
  return { el: form };
}
