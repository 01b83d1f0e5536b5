// Runs anywhere (app/ is runtime-free). The paper a test sheet is printed on: ISO A4 (ISO 216, 210 × 297 mm)
// or US Letter (ANSI/ASME Y14.1, 8.5 × 11 in = 215.9 × 279.4 mm), the default taken from the locale.

export type Paper = 'a4' | 'letter';
export const PAPERS: readonly Paper[] = ['a4', 'letter'];
export const PAPER_LABELS: Record<Paper, string> = { a4: 'A4', letter: 'US Letter' };

/**
 * Regions where US Letter is the usual office paper; everywhere else uses A4 (from memory: the Americas
 * listed here and the Philippines).
 */
const LETTER_REGIONS = new Set([
  'US',
  'CA',
  'MX',
  'PH',
  'CL',
  'CO',
  'VE',
  'GT',
  'CR',
  'PA',
  'DO',
  'PR',
  'SV',
  'NI',
]);

/**
 * The paper for a locale: a BCP 47 tag ("en-US", "fr-CA") or a POSIX locale ("en_US.UTF-8", "de_DE@euro").
 * A locale without a region, "C" or "POSIX" gives A4, the international default.
 */
export function paperForLocale(locale: string | undefined): Paper {
  const m = /^[a-z]{2,3}[-_]([A-Za-z]{2}|\d{3})\b/i.exec((locale ?? '').trim());
  return m && LETTER_REGIONS.has(m[1].toUpperCase()) ? 'letter' : 'a4';
}
