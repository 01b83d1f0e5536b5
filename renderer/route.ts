// Runs in the renderer. Where the views send the user: the route in the address (#/designs,
// #/compare?design=ID, #/sheet?unit=ID), and what every records view is given. Apart from the navigation
// itself, so the views import this and the navigation imports the views, with no cycle between them.
import type { ServiceClient, Session } from '../app/api';

export type Notify = (level: 'info' | 'warn' | 'error', msg: string) => void;

export interface NavDeps {
  api: ServiceClient;
  notify: Notify;
  /** Opens a stored session on the bench (the bench view takes over). */
  openSession(session: Session): void;
  /** Shows the sessions dialog (when the bench is shown with no session open). */
  showSessions(): void;
}

/** Where the records views send the user: a view and its parameters. */
export interface Route {
  view: 'bench' | 'designs' | 'compare' | 'sheet';
  params: Record<string, string>;
}

export interface RecordsView {
  show(params: Record<string, string>): Promise<void>;
}

export function parseRoute(hash: string): Route {
  const m = /^#\/(designs|compare|sheet|bench)(?:\?(.*))?$/.exec(hash);
  if (!m) return { view: 'bench', params: {} };
  return { view: m[1] as Route['view'], params: Object.fromEntries(new URLSearchParams(m[2] ?? '')) };
}

export function routeHash(view: Route['view'], params: Record<string, string> = {}): string {
  const q = new URLSearchParams(params).toString();
  return `#/${view}${q ? `?${q}` : ''}`;
}

/** Goes to a view (through the address, so back and reload work). */
export function go(view: Route['view'], params: Record<string, string> = {}): void {
  const next = routeHash(view, params);
  if (location.hash === next) window.dispatchEvent(new HashChangeEvent('hashchange'));
  else location.hash = next;
}
