// Runs in the Electron main process. Prints a test sheet with the desktop shell's own Chromium
// (webContents.printToPDF) in a hidden window with scripts off, so the desktop app needs no other browser.
import { BrowserWindow } from 'electron';
import { footerTemplate, type PdfRenderer } from '../../sheet/pdf';

export const electronPdf: PdfRenderer = async (html, footer) => {
  const win = new BrowserWindow({
    show: false,
    webPreferences: { sandbox: true, contextIsolation: true, nodeIntegration: false, javascript: false },
  });
  try {
    await win.loadURL(`data:text/html;charset=utf-8,${encodeURIComponent(html)}`);
    const pdf = await win.webContents.printToPDF({
      pageSize: 'A4',
      printBackground: true,
      preferCSSPageSize: true,
      displayHeaderFooter: true,
      headerTemplate: '<div></div>',
      footerTemplate: footerTemplate(footer),
    });
    return new Uint8Array(pdf);
  } finally {
    win.destroy();
  }
};
