// Runs in the renderer. The rules every dialog keeps: it is named by its heading, takes the focus when it
// opens, keeps Tab and Shift+Tab inside itself, closes with Esc (when it may be closed at all), and gives
// the focus back to whatever had it before.
const FOCUSABLE =
  'button:not([disabled]), input:not([disabled]):not([type=hidden]), select:not([disabled]), textarea:not([disabled]), a[href], [tabindex]:not([tabindex="-1"])';

/**
 * Makes `overlay` (already holding its dialog, with an h1) a modal dialog and puts it in the page.
 * Returns the function that closes it; `closable` false leaves Esc without effect (the first-start
 * sessions dialog has nothing behind it to go back to).
 */
export function openModal(overlay: HTMLElement, closable: boolean): () => void {
  const opener = document.activeElement;
  const heading = overlay.querySelector('h1');
  if (heading) {
    heading.id ||= `${overlay.id || 'dialog'}-title`;
    overlay.setAttribute('aria-labelledby', heading.id);
  }
  overlay.setAttribute('role', 'dialog');
  overlay.setAttribute('aria-modal', 'true');
  const close = () => {
    overlay.remove();
    if (opener instanceof HTMLElement && opener.isConnected) opener.focus();
  };
  overlay.addEventListener('keydown', (e) => {
    if (e.key === 'Escape' && closable) {
      e.preventDefault();
      e.stopPropagation();
      close();
      return;
    }
    if (e.key !== 'Tab') return;
    const items = [...overlay.querySelectorAll<HTMLElement>(FOCUSABLE)].filter(
      (el) => el.offsetParent !== null || el === document.activeElement,
    );
    if (!items.length) return;
    const first = items[0];
    const last = items[items.length - 1];
    if (e.shiftKey && (document.activeElement === first || !overlay.contains(document.activeElement))) {
      e.preventDefault();
      last.focus();
    } else if (
      !e.shiftKey &&
      (document.activeElement === last || !overlay.contains(document.activeElement))
    ) {
      e.preventDefault();
      first.focus();
    }
  });
  document.body.append(overlay);
  // Into the dialog: its first field, or the dialog itself while its content is still loading.
  const dialog = overlay.querySelector<HTMLElement>('.dialog') ?? overlay;
  dialog.tabIndex = -1;
  const target = overlay.querySelector<HTMLElement>('input:not([type=hidden]), select, textarea') ?? dialog;
  target.focus();
  return close;
}
