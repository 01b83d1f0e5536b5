// Runs in Node. The test sheet of a unit: model from the database, HTML, and PDF through a renderer.
import type { SheetHtml } from '../../app/api/records';
import type { Store } from '../store/store';
import { sheetDocument, sheetFragment } from './html';
import { buildSheet, type SheetModel, type SheetOptions } from './model';
import { chromiumPdf, type PdfRenderer } from './pdf';

export function renderSheet(
  store: Store,
  unitId: string,
  opts: SheetOptions = {},
): SheetHtml & { model: SheetModel } {
  const model = buildSheet(store, unitId, opts);
  return {
    model,
    html: sheetDocument(model),
    fragment: sheetFragment(model),
    fileName: model.fileName,
    sheetRef: model.sheetRef,
    overall: model.overall,
  };
}

export async function sheetPdf(
  store: Store,
  unitId: string,
  opts: SheetOptions = {},
  renderer: PdfRenderer = chromiumPdf,
): Promise<{ pdf: Uint8Array; model: SheetModel; fileName: string }> {
  const s = renderSheet(store, unitId, opts);
  const pdf = await renderer(s.html, `Nullbench test sheet ${s.model.sheetRef} · ${s.model.identity.serial}`);
  return { pdf, model: s.model, fileName: s.fileName };
}

export type { PdfRenderer, SheetModel, SheetOptions };
