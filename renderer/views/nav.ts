// Runs in the renderer. The top-level navigation: the bench (default) and the record-keeping views
// (designs and units, revision comparison, test sheets). The address keeps the place (#/designs,
// #/compare?design=ID, #/sheet?unit=ID), so the browser's back button and a reload land where you were.
import { $, clear, h } from '../dom';
import { CompareView } from './compare';
import { DesignsView } from './designs';
import { SheetView } from './sheetview';
import { go, parseRoute, type NavDeps, type RecordsView, type Route } from '../route';

const LABELS: [Route['view'], string][] = [
  ['bench', 'Bench'],
  ['designs', 'Designs & units'],
  ['compare', 'Compare revisions'],
  ['sheet', 'Test sheets'],
];

export function mountNav(deps: NavDeps): void {
  const bench = $('#app');
  const records = $('#records');
  const nav = $('#nav');
  const views: Record<Exclude<Route['view'], 'bench'>, RecordsView> = {
    designs: new DesignsView(records, deps),
    compare: new CompareView(records, deps),
    sheet: new SheetView(records, deps),
  };
  const buttons = LABELS.map(([view, label]) =>
    h(
      'button',
      {
        type: 'button',
        class: 'nav-item',
        'data-view': view,
        onclick: () => go(view),
      },
      label,
    ),
  );
  nav.append(...buttons);
  let current: Route['view'] | null = null;

  const show = async () => {
    const r = parseRoute(location.hash);
    buttons.forEach((b) => {
      const on = b.dataset.view === r.view;
      b.classList.toggle('on', on);
      if (on) b.setAttribute('aria-current', 'page');
      else b.removeAttribute('aria-current');
    });
    const wasBench = current === 'bench';
    current = r.view;
    if (r.view === 'bench') {
      records.hidden = true;
      clear(records);
      bench.hidden = false;
      // Coming back to an empty bench: offer the sessions dialog again.
      if (!wasBench && !document.querySelector('#level-dut') && !document.querySelector('.overlay'))
        deps.showSessions();
      return;
    }
    // The sessions dialog belongs to the bench; the records views do not need a session.
    document.querySelector('#sessions-dialog')?.remove();
    bench.hidden = true;
    records.hidden = false;
    try {
      await views[r.view].show(r.params);
    } catch (e) {
      deps.notify('error', (e as Error).message);
    }
  };
  window.addEventListener('hashchange', () => void show());
  // One lit item: the route's (after a reload on a records view too), or the bench with no route.
  if (location.hash) void show();
  else {
    current = 'bench';
    buttons[0].classList.add('on');
    buttons[0].setAttribute('aria-current', 'page');
  }
}
