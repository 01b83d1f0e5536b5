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
    // The paper size and margins are the sheet's own @page rule (A4 or US Letter), as in the CLI's print.
    const pdf = await win.webContents.printToPDF({
      printBackground: true,
      margins: { top: 0, bottom: 0, left: 0, right: 0 },
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
