// One CSV writer for every export (RFC 4180: comma-separated, CRLF line ends,
// fields quoted when they hold a comma, quote or line break, quotes doubled).

/**
 * Text a spreadsheet would read as a formula (first character =, +, -, @, tab
 * or carriage return: the OWASP "CSV injection" list) is prefixed with an
 * apostrophe, so it shows as text. Numbers are written as numbers, so a
 * loudness of -23.4 stays a number.
 */
export function csvCell(value: string | number | null | undefined): string {
  if (value === null || value === undefined) return ''
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : ''
  const text = /^[=+\-@\t\r]/u.test(value) ? `'${value}` : value
  return /[",\r\n]/u.test(text) ? `"${text.replace(/"/gu, '""')}"` : text
}

export const csvLine = (cells: (string | number | null | undefined)[]) => `${cells.map(csvCell).join(',')}\r\n`

/** A whole document: a byte-order mark (so spreadsheets read UTF-8), the header, the rows. */
export function csvDocument(header: string[], rows: (string | number | null | undefined)[][]): string {
  return `\uFEFF${csvLine(header)}${rows.map(csvLine).join('')}`
}

/** A file name for Content-Disposition: letters, digits, dots, dashes and underscores only. */
export const csvFileName = (base: string) =>
  `${
    base
      .normalize('NFKD')
      .replace(/[^\w.-]+/g, '-')
      .replace(/^-+|-+$/g, '')
      .slice(0, 80) || 'export'
  }.csv`
