import type { ApiClient, Me } from './api-client.ts';

/** What every view receives: the API client, who is signed in, and the queue order for j/k on run pages. */
export interface AppContext {
  api: ApiClient;
  me: Me;
  /** Run ids of the queue as last shown, so the run page can step to the next/previous run. */
  queue: string[];
  /** Hash of the queue page that produced `queue` (filters included), to return to it. */
  queueHash: string;
  navigate(hash: string): void;
  /** Show a short status message in the shell (polite live region). */
  announce(text: string, kind?: 'ok' | 'error'): void;
}

/** A rendered page: its root element and an optional key handler returning true when it used the key. */
export interface View {
  el: HTMLElement;
  onKey?(ev: KeyboardEvent): boolean;
  dispose?(): void;
}
