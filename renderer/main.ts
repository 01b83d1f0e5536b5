// Runs in the renderer. Starts the UI: connects to the service, wires events to the bench view, and opens
// the sessions dialog when no session is active.
import type { Session, Status } from '../app/api';
import { connect } from './api';
import { $, h } from './dom';
import { BenchView, readingRule } from './views/bench';
import { showReceiversDialog } from './views/receivers';
import { showSessionsDialog } from './views/sessions';
import { mountNav } from './views/nav';
import { when } from './format';

const api = connect();
const notices = $('#notices');

/** The newest notices, newest first, in the context bar under the top bar (never over a control). */
function notify(level: 'info' | 'warn' | 'error', message: string): void {
  const n = h(
    'div',
    { class: `notice ${level}`, role: level === 'error' ? 'alert' : 'status', title: message },
    message,
  );
  notices.prepend(n);
  setTimeout(() => n.remove(), level === 'info' ? 4000 : 12000);
  while (notices.children.length > 2) notices.lastElementChild?.remove();
}

const view = new BenchView($('#app'), api, notify);

async function opened(s: Session): Promise<void> {
  const tree = await api.call('tree', {});
  let label = '';
  for (const d of tree)
    for (const r of d.revisions)
      for (const u of r.units) if (u.id === s.unitId) label = `${u.serial} · ${d.name} ${r.name}`;
  $('#session-line').textContent =
    `${label} · session of ${when(s.startedAt)}${s.operator ? ` · ${s.operator}` : ''}`;
  await view.open(s);
}

function showLink(s: Status): void {
  const el = $('#link-state');
  if (s.sessionEnded) {
    el.className = 'link-state ended';
    el.textContent = 'ended · review only';
  } else {
    el.className = `link-state ${s.lastError ? 'fault' : s.live ? 'live' : 'idle'}`;
    el.textContent = s.lastError ? `fault: ${s.lastError}` : s.live ? `reading · ${s.source}` : 'idle';
  }
  // A session can be ended while it is open and not ended yet; an ended one offers a new one like it.
  $('#btn-end-session').hidden = !s.activeSessionId || s.sessionEnded;
  $('#btn-end-session').title =
    `Stop reading and close this session for good; its readings stay. ${readingRule(s.unattendedStopS)}`;
  const banner = $('#ended-banner');
  banner.hidden = !s.activeSessionId || !s.sessionEnded;
  // The banner's text is fetched once per ended session, not on every status event.
  if (s.sessionEnded && s.activeSessionId && banner.dataset.session !== s.activeSessionId) {
    banner.dataset.session = s.activeSessionId;
    void api.call('getSession', { sessionId: s.activeSessionId }).then(
      (x) =>
        ($('#ended-text').textContent =
          `This session ended ${x.endedAt ? when(x.endedAt) : ''}. Its readings are shown; nothing new is ` +
          'stored in it unless you continue it. For a new sitting, start a new session like it.'),
      () => undefined,
    );
  }
}

api.listen('reading', (r) => view.onReading(r));
api.listen('status', (s) => {
  showLink(s);
  view.onStatus(s);
});
api.listen('progress', (p) =>
  p.task.startsWith('plan:') ? view.plan.onProgress(p) : view.onProgress(p.done, p.total, p.message),
);
api.listen('notice', (n) => notify(n.level, n.message));

/**
 * One dialog at a time: a second click on the same button leaves its dialog as it is; another dialog's
 * button closes the open one first. True when the asked-for dialog is already open.
 */
function alreadyOpen(id: string): boolean {
  if (document.getElementById(id)) return true;
  document.querySelectorAll('.overlay').forEach((o) => o.remove());
  return false;
}

$('#btn-sessions').addEventListener('click', () => {
  if (alreadyOpen('sessions-dialog')) return;
  void showSessionsDialog({ api, onOpened: (s) => void opened(s) }, true).catch((e: Error) =>
    notify('error', e.message),
  );
});

$('#btn-end-session').addEventListener('click', () => {
  const btn = $('#btn-end-session') as HTMLButtonElement;
  btn.disabled = true;
  void api
    .call('endSession', {})
    // Ended, it stays on screen for review, with the way to a new session like it.
    .then((s) => api.call('openSession', { sessionId: s.id }))
    .then(
      (s) => opened(s),
      (e: Error) => notify('error', e.message),
    )
    .finally(() => (btn.disabled = false));
});

$('#btn-repeat-session').addEventListener('click', () => {
  const id = $('#ended-banner').dataset.session;
  if (!id) return;
  void api.call('repeatSession', { sessionId: id }).then(
    (s) => void opened(s),
    (e: Error) => notify('error', e.message),
  );
});

$('#btn-continue-session').addEventListener('click', () => {
  const id = $('#ended-banner').dataset.session;
  if (!id) return;
  void api.call('continueSession', { sessionId: id }).then(
    (s) => {
      delete $('#ended-banner').dataset.session;
      notify(
        'info',
        'Session continued: new readings join it, and its notes say when it was taken up again.',
      );
      return opened(s);
    },
    (e: Error) => notify('error', e.message),
  );
});

$('#btn-receivers').addEventListener('click', () => {
  if (alreadyOpen('receivers-dialog')) return;
  void showReceiversDialog(api, notify).catch((e: Error) => notify('error', e.message));
});

document.addEventListener('keydown', (e) => {
  const t = e.target as HTMLElement;
  // A modified key is somebody else's shortcut (Ctrl+K, Alt+K…): only the bare key keeps.
  if (
    e.key.toLowerCase() === 'k' &&
    !e.ctrlKey &&
    !e.altKey &&
    !e.metaKey &&
    !e.repeat &&
    !['INPUT', 'TEXTAREA', 'SELECT'].includes(t.tagName) &&
    !document.querySelector('.overlay') &&
    !$('#app').hidden
  ) {
    e.preventDefault();
    void view.keep();
  }
});

async function boot(): Promise<void> {
  const status = await api.call('status', {});
  showLink(status);
  if (status.activeSessionId) {
    await opened(await api.call('getSession', { sessionId: status.activeSessionId }));
    view.onStatus(status);
  } else if (!$('#app').hidden) {
    await showSessionsDialog({ api, onOpened: (s) => void opened(s) }, false);
  }
}

mountNav({
  api,
  notify,
  openSession: (s) => void opened(s),
  showSessions: () => $('#btn-sessions').click(),
});
boot().catch((e: Error) => notify('error', `Could not start: ${e.message}`));
