// Runs in the renderer. A strip of panels of which one shows at a time (the bench's chart, map, plan,
// spectrum…): a tab list with the keyboard rules of the WAI-ARIA tabs pattern (arrows, Home, End), the
// choice remembered per browser. The panels stay in the page while hidden, so their state lives on.
import { h } from './dom';

export interface Pane {
  key: string;
  label: string;
  body: HTMLElement;
}

export class Panes {
  readonly root: HTMLElement;
  private readonly tabs = new Map<string, HTMLButtonElement>();
  private readonly bodies = new Map<string, HTMLElement>();

  constructor(
    private readonly id: string,
    panes: Pane[],
    label: string,
  ) {
    const list = h('div', { class: 'pane-tabs', role: 'tablist', 'aria-label': label });
    const holder = h('div', { class: 'pane-bodies' });
    for (const p of panes) {
      const tab = h(
        'button',
        {
          type: 'button',
          role: 'tab',
          id: `tab-${p.key}`,
          'aria-controls': `pane-${p.key}`,
          onclick: () => this.show(p.key, true),
        },
        p.label,
      );
      const body = h(
        'div',
        { role: 'tabpanel', id: `pane-${p.key}`, 'aria-labelledby': `tab-${p.key}`, class: 'pane' },
        p.body,
      );
      this.tabs.set(p.key, tab);
      this.bodies.set(p.key, body);
      list.append(tab);
      holder.append(body);
    }
    list.addEventListener('keydown', (e) => this.onKey(e));
    this.root = h('div', { class: 'panes', id }, list, holder);
    let saved: string | null = null;
    try {
      saved = localStorage.getItem(`nullbench.pane.${id}`);
    } catch {
      saved = null;
    }
    this.show(saved && this.tabs.has(saved) ? saved : panes[0].key, false);
  }

  /** Shows one panel; `remember` keeps the choice for the next visit. */
  show(key: string, remember: boolean): void {
    for (const [k, tab] of this.tabs) {
      const on = k === key;
      tab.setAttribute('aria-selected', String(on));
      tab.tabIndex = on ? 0 : -1;
      tab.classList.toggle('on', on);
      this.bodies.get(k)!.hidden = !on;
    }
    if (remember) {
      try {
        localStorage.setItem(`nullbench.pane.${this.id}`, key);
      } catch {
        // A browser without storage forgets the choice; the panel still shows.
      }
    }
    // Charts measure their box when shown.
    window.dispatchEvent(new Event('resize'));
  }

  /** A tab's label, e.g. with a count. */
  relabel(key: string, label: string): void {
    const t = this.tabs.get(key);
    if (t && t.textContent !== label) t.textContent = label;
  }

  private onKey(e: KeyboardEvent): void {
    const keys = [...this.tabs.keys()];
    const at = keys.findIndex((k) => this.tabs.get(k) === document.activeElement);
    if (at < 0 || e.altKey || e.ctrlKey || e.metaKey) return;
    const to =
      e.key === 'ArrowRight'
        ? (at + 1) % keys.length
        : e.key === 'ArrowLeft'
          ? (at - 1 + keys.length) % keys.length
          : e.key === 'Home'
            ? 0
            : e.key === 'End'
              ? keys.length - 1
              : -1;
    if (to < 0) return;
    e.preventDefault();
    this.show(keys[to], true);
    this.tabs.get(keys[to])!.focus();
  }
}
