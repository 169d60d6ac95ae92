// The requests `npm run bench:library` times, one table row each, and the
// ids they name. tests/api/library-search-reference.test.ts checks every
// library search here against a plain reading of the library.
import type { Db } from '../server/core/database'

/** Ids the queries name, looked up in each seeded library (the same in every size, which is seeded alike). */
export interface Known {
  fanId: number
  anySession: number
  anyUploader: number
}

export async function knownIds(db: Db): Promise<Known> {
  return {
    anySession: (
      await db.selectFrom('capture_sessions').select('id').orderBy('id').limit(1).offset(41).executeTakeFirstOrThrow()
    ).id,
    anyUploader: (
      await db.selectFrom('users').select('id').where('email', '=', 'recordist@example.test').executeTakeFirstOrThrow()
    ).id,
    fanId: (await db.selectFrom('sources').select('id').where('name', '=', 'Desk fan 3').executeTakeFirstOrThrow()).id,
  }
}

export interface Answer {
  total?: number
  totalCapped?: boolean
}

/**
 * One row of the table. To time another kind of request, add a row: `path`
 * builds its path and query string from the library's known ids, `matches`
 * reads the count the table shows from its JSON answer.
 */
export interface BenchQuery {
  name: string
  path: (k: Known) => string
  matches?: (body: Answer) => string
  /** The GET /api/takes query string, for searches (the reference test checks each against a plain reading of the library). */
  takesQuery?: (k: Known) => string
}

/** A page's total as the library shows it: counts stop at a cap, beyond which the answer says "more". */
const pageTotal = (body: Answer) => `${(body.total ?? 0).toLocaleString('en')}${body.totalCapped ? '+' : ''}`
const search = (name: string, qs: string | ((k: Known) => string)): BenchQuery => ({
  name,
  path: (k) => {
    const s = typeof qs === 'string' ? qs : qs(k)
    return `/api/takes${s ? `?${s}` : ''}`
  },
  matches: pageTotal,
  takesQuery: (k) => (typeof qs === 'string' ? qs : qs(k)),
})

export const QUERIES: BenchQuery[] = [
  { name: 'baseline: `GET /api/auth/me` (session check, no search)', path: () => '/api/auth/me' },
  search('everything, newest first (page 1)', ''),
  search('text "hum"', 'q=hum'),
  search('text "power supply 60"', `q=${encodeURIComponent('power supply 60')}`),
  search('text prefix "whin"', 'q=whin'),
  search('tag "whine"', 'tag=whine'),
  search('two tags "hum" + "loopable"', 'tag=hum&tag=loopable'),
  search('one device', (k) => `sourceId=${k.fanId}`),
  search(
    'kind + LUFS range + duration',
    'sourceKind=power-supply&minLufs=-30&maxLufs=-18&minDuration=5&maxDuration=60',
  ),
  search('true-peak range, sorted by loudness', 'minTruePeak=-12&maxTruePeak=-3&sort=integratedLufs&order=desc'),
  search('hum = 60 Hz', 'hum=60'),
  search('no hum, sorted by noise floor', 'hum=none&sort=noiseFloor'),
  search('sorted by title', 'sort=title'),
  search('sorted by loudness, ascending', 'sort=integratedLufs&order=asc'),
  search('sorted by capture session', 'sort=session'),
  search('deep page 100', 'page=100'),
  search('session + uploader', (k) => `sessionId=${k.anySession}&uploaderId=${k.anyUploader}`),
  search('text + kind + LUFS + no hum, by true peak', 'q=whine&sourceKind=display&minLufs=-40&hum=none&sort=truePeak'),
  search('text + 48 kHz stereo + duration', 'q=drone&sampleRate=48000&channels=2&minDuration=30'),
]
