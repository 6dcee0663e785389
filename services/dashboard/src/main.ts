import { ApiError, createApiClient, loadToken, saveToken, type Me } from './api-client.ts';
import type { AppContext, View } from './app-context.ts';
import { h, mount } from './dom.ts';
import { createHelpOverlay, isTyping } from './keyboard.ts';
import { renderFleet } from './views/fleet-view.ts';
import { renderMaintenance } from './views/maintenance-view.ts';
import { renderLogin } from './views/login-view.ts';
import { renderQueue } from './views/queue-view.ts';
import { renderRun } from './views/run-view.ts';

const api = createApiClient(loadToken);
const help = createHelpOverlay();
const main = h('main', { id: 'main', tabindex: '-1' });
const status = h('div', { class: 'status', role: 'status', 'aria-live': 'polite' });
const who = h('span', { class: 'who' });
const nav = h(
  'nav',
  { 'aria-label': 'Main' },
  h('a', { href: '#/queue', 'data-nav': 'queue' }, 'Review queue'),
  h('a', { href: '#/fleet', 'data-nav': 'fleet' }, 'Fleet'),
  h('a', { href: '#/maintenance', 'data-nav': 'maintenance' }, 'Maintenance & policy'),
);
const header = h(
  'header',
  { class: 'shell' },
  h('a', { class: 'brand', href: '#/queue' }, h('span', { class: 'brand-mark', 'aria-hidden': 'true' }, '⊥'), 'Plumbline'),
  nav,
  h('span', { class: 'spacer' }),
  status,
  who,
  h('button', { type: 'button', class: 'link', title: 'Keyboard shortcuts (?)', onclick: () => help.toggle() }, '? keys'),
  h('button', { type: 'button', class: 'link', onclick: () => signOut() }, 'Sign out'),
);
document.body.append(header, main, help.el);

let current: View | null = null;
let me: Me | null = null;
let pendingG = false;
let statusTimer: ReturnType<typeof setTimeout> | undefined;

const ctx: AppContext = {
  api,
  me: { role: '', name: '', robot_id: null },
  queue: [],
  queueHash: '#/queue',
  navigate(hash) {
    if (location.hash === hash) void route();
    else location.hash = hash;
  },
  announce(text, kind = 'ok') {
    status.textContent = text;
    status.dataset.kind = kind;
    clearTimeout(statusTimer);
    statusTimer = setTimeout(() => (status.textContent = ''), 6000);
  },
};

function signOut(): void {
  saveToken(null);
  me = null;
  location.hash = '#/login';
}

async function ensureSignedIn(): Promise<boolean> {
  if (me) return true;
  if (!loadToken()) return false;
  try {
    me = await api.me();
    ctx.me = me;
    who.textContent = `${me.name} · ${me.role}`;
    return true;
  } catch (err) {
    if (err instanceof ApiError && err.status === 401) saveToken(null);
    return false;
  }
}

let routeSeq = 0;

async function route(): Promise<void> {
  // A newer navigation supersedes this one: a slow page must not overwrite the page asked for after it.
  const seq = ++routeSeq;
  current?.dispose?.();
  current = null;
  const hash = location.hash || '#/queue';
  const [path = '', query = ''] = hash.slice(1).split('?');
  const parts = path.split('/').filter(Boolean);
  const page = parts[0] ?? 'queue';
  header.dataset.signedIn = String(me !== null);
  if (page !== 'login' && !(await ensureSignedIn())) {
    if (seq === routeSeq) location.hash = '#/login';
    return;
  }
  header.dataset.signedIn = String(me !== null);
  for (const a of nav.querySelectorAll('a')) a.toggleAttribute('aria-current', a.dataset.nav === page || (page === 'runs' && a.dataset.nav === 'queue'));
  mount(main, h('p', { class: 'loading' }, 'Loading…'));
  try {
    let view: View;
    if (page === 'login') {
      view = renderLogin(async (token) => {
        saveToken(token);
        me = null;
        if (await ensureSignedIn()) location.hash = '#/queue';
        else throw new Error('The API did not accept this token.');
      });
    } else if (page === 'runs' && parts[1]) view = await renderRun(ctx, decodeURIComponent(parts[1]));
    else if (page === 'fleet') view = await renderFleet(ctx);
    else if (page === 'maintenance') view = await renderMaintenance(ctx);
    else view = await renderQueue(ctx, new URLSearchParams(query));
    if (seq !== routeSeq) return;
    current = view;
    mount(main, view.el);
    document.title = `${main.querySelector('h1')?.textContent ?? 'Plumbline'} · Plumbline`;
  } catch (err) {
    if (seq !== routeSeq) return;
    if (err instanceof ApiError && err.status === 401) {
      signOut(); // token revoked or expired while the page was open
      return;
    }
    const msg = err instanceof Error ? err.message : String(err);
    mount(main, h('div', { class: 'error-box', role: 'alert' }, h('h1', {}, 'Could not load this page'), h('p', {}, msg)));
  }
}

document.addEventListener('keydown', (ev) => {
  if (ev.key === 'Escape') {
    if (help.open()) help.toggle(false);
    else if (isTyping(ev)) (ev.target as HTMLElement).blur();
    return;
  }
  if ((ev.ctrlKey || ev.metaKey) && ev.key === 'Enter') {
    if (current?.onKey?.(ev)) ev.preventDefault();
    return;
  }
  if (isTyping(ev) || ev.ctrlKey || ev.metaKey || ev.altKey) return;
  if (ev.key === '?') {
    help.toggle();
    ev.preventDefault();
    return;
  }
  if (help.open()) return;
  if (pendingG) {
    pendingG = false;
    if (ev.key === 'q') return ctx.navigate(ctx.queueHash);
    if (ev.key === 'f') return ctx.navigate('#/fleet');
  }
  if (ev.key === 'g') {
    pendingG = true;
    return;
  }
  if (current?.onKey?.(ev)) ev.preventDefault();
});

window.addEventListener('hashchange', () => void route());
void route();
