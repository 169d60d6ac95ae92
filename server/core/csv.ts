// The one CSV writer of the server (capture logs, library exports).
//
// RFC 4180: fields holding a comma, a double quote, CR or LF are quoted, quotes
// doubled; records end with CRLF. Text cells are made safe for spreadsheets
// (OWASP "CSV injection"): a cell beginning with = + - @, a tab or a carriage
// return gets a leading apostrophe, so it is read as text, never as a formula.
// Numbers we write ourselves (−23.4) are written as numbers and never prefixed,
// so loudness columns stay numeric.

export type CsvValue = string | number | null | undefined

const FORMULA_START = /^[=+\-@\t\r]/
const NEEDS_QUOTES = /[",\r\n]/

/** One cell: numbers as they are (null, NaN and ±Infinity empty), text guarded against formulas and quoted where needed. */
export function csvCell(value: CsvValue): string {
  if (value === null || value === undefined) return ''
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : ''
  const text = FORMULA_START.test(value) ? `'${value}` : value
  return NEEDS_QUOTES.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

/** One record, CRLF-terminated. */
export const csvRow = (cells: CsvValue[]): string => `${cells.map(csvCell).join(',')}\r\n`

/** A whole document: a header record, then one record per row. */
export function toCsv<T>(columns: { header: string; value: (row: T) => CsvValue }[], rows: Iterable<T>): string {
  let out = csvRow(columns.map((c) => c.header))
  for (const r of rows) out += csvRow(columns.map((c) => c.value(r)))
  return out
}

/** A file name for Content-Disposition: letters, digits, dots, dashes and underscores only. */
export const csvFileName = (base: string) => `${base.normalize('NFKD').replace(/[^\w.-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 80) || 'export'}.csv`
