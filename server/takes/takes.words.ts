import { sql } from 'kysely'
import type { Db } from '../core/database'

/** Runs of letters or digits: the words of a search, at most 32 of them. */
function wordsOf(q: string): string[] {
  return (q.normalize('NFKC').match(/[\p{L}\p{N}]+/gu) ?? []).slice(0, 32)
}

const quoted = (w: string) => `"${w.replace(/"/g, '""')}"`

/**
 * User text to an FTS5 query that is always valid: every run of letters or
 * digits becomes a quoted prefix term ("whin"*), joined with AND. Quotes,
 * operators (NEAR, AND, -, *), parentheses and SQL never reach FTS5 syntax.
 * Returns null when the text holds no word at all.
 */
export function ftsQuery(q: string): string | null {
  const words = wordsOf(q)
  return words.length ? words.map((w) => `${quoted(w)}*`).join(' ') : null
}

/**
 * A typed word stands for at most this many whole terms; past it the word stays a prefix.
 * Listing a term reads its whole list of takes (to count them), so one-letter words, which begin
 * hundreds of terms, are not looked up at all.
 */
const MOST_TERMS = 16

/**
 * The same query as `ftsQuery`, with each word spelled out as the index's
 * whole terms that begin with it: "whin" becomes ("whine" OR "whines").
 *
 * Why: FTS5 answers a prefix term by merging the full list of every term it
 * covers, up front, in each statement that uses it (about 5 ms per statement
 * for a word in 15 % of a million takes). A whole term is read lazily: it
 * seeks by take id and stops at a LIMIT. A search runs several statements
 * over the same words, so they are spelled out once, from the index's term
 * list (migration search_terms).
 *
 * Only words of two or more ASCII letters and digits are spelled out: the
 * index folds case and accents its own way (unicode61), and for those the
 * folding is plain lower case. Other words, and words covering more than
 * MOST_TERMS terms, stay prefixes. Returns null when there is no word, or a word that
 * no term begins with (nothing can match).
 */
export async function searchWords(db: Db, q: string): Promise<string | null> {
  const words = wordsOf(q)
  if (!words.length) return null
  const parts: string[] = []
  for (const word of new Set(words.map((w) => (/^[A-Za-z0-9]+$/.test(w) ? w.toLowerCase() : w)))) {
    if (!/^[a-z0-9]{2,}$/.test(word)) {
      parts.push(`${quoted(word)}*`)
      continue
    }
    // Every term that starts with the word sorts between it and the word followed by the highest code point.
    const terms = (
      await sql<{ term: string }>`SELECT term FROM take_fts_terms
        WHERE term >= ${word} AND term < ${`${word}\u{10FFFF}`} LIMIT ${MOST_TERMS + 1}`.execute(db)
    ).rows.map((r) => r.term)
    if (!terms.length) return null
    if (terms.length > MOST_TERMS) parts.push(`${quoted(word)}*`)
    else parts.push(terms.length === 1 ? quoted(terms[0]) : `(${terms.map(quoted).join(' OR ')})`)
  }
  // Implicit AND joins phrases only; a parenthesised group needs the operator.
  return parts.join(' AND ')
}
