// What a person types into a number field, read as a number: a leading minus
// in any of the dashes keyboards and pasted text carry ("−20", "–3"), a decimal
// comma ("12,5"), spaces around. Half-typed text ("-", "3.") is not a number yet.

/** The number typed; '' for an empty field; null while it is not a number (yet). */
export function parseTyped(text: string): number | '' | null {
  const t = text
    .trim()
    .replace(/^[\u2212\u2012\u2013\u2014]/u, '-')
    .replace(',', '.')
  if (!t) return ''
  if (!/^[-+]?(\d+\.?\d*|\.\d+)$/u.test(t)) return null
  return Number(t)
}

/** A number as the field shows it: a true minus sign is not used, so the text stays what a keyboard types. */
export const typedText = (v: number | null | undefined): string =>
  v === null || v === undefined || !Number.isFinite(v) ? '' : String(v)
