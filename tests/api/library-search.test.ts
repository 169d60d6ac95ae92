// GET /api/takes against a seeded library whose every answer is known: each
// filter, each sort column in both orders, paging, full-text search over every
// field that feeds it, and hostile search strings.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { sql } from 'kysely'
import { FILTERED_COLUMNS, SORT_INDEXES } from '../../server/takes/takes.search'
import { TAKE_SORTS, TakePage, type TakeSort } from '@shared/schemas/takes'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { FIXTURE_SESSIONS, FIXTURE_TAKES, seedLibrary, type FixtureTake, type SeededLibrary } from './library-fixtures'

let server: TestServer
let lib: SeededLibrary
let reader: Client

beforeAll(async () => {
  server = await startTestServer()
  lib = await seedLibrary(server.ctx.db)
  reader = await signedIn(server.url, 'producer')
})
afterAll(async () => {
  await server.stop()
})

async function search(qs: string) {
  const res = await reader.get(`/api/takes?pageSize=200${qs ? `&${qs}` : ''}`)
  expect(res.status, `${qs} → ${JSON.stringify(res.body)}`).toBe(200)
  TakePage.parse(res.body)
  return res.body as { items: { id: number }[]; total: number; page: number; pageSize: number }
}

/** The fixture keys a query finds, sorted, after checking total agrees with the list. */
async function found(qs: string): Promise<string> {
  const body = await search(qs)
  expect(body.total).toBe(body.items.length)
  return body.items
    .map((t) => lib.keyOf(t.id))
    .sort()
    .join('')
}

/** Fixture keys in the order the API returns them. */
async function ordered(qs: string): Promise<string> {
  return (await search(qs)).items.map((t) => lib.keyOf(t.id)).join('')
}

describe('filters of GET /api/takes, each against its known answer', () => {
  it('returns everything without filters, newest first', async () => {
    expect(await ordered('')).toBe('HGFEDCBA')
  })

  const cases: [string, () => string, string][] = [
    ['one device', () => `sourceId=${lib.source.charger}`, 'AF'],
    ['two devices (both linked)', () => `sourceId=${lib.source.charger}&sourceId=${lib.source.workstation}`, 'F'],
    ['a device nobody used', () => `sourceId=999999`, ''],
    ['one device kind', () => 'sourceKind=motor', 'CH'],
    ['two device kinds (either)', () => 'sourceKind=motor&sourceKind=display', 'CDH'],
    ['a tag', () => 'tag=hum', 'BC'],
    ['a tag typed in capitals with spaces', () => `tag=${encodeURIComponent('  Data   BURST ')}`, 'E'],
    ['two tags (both carried)', () => 'tag=hum&tag=drone', 'B'],
    ['a capture session', () => `sessionId=${lib.session.bench}`, 'ABG'],
    ['an uploader', () => `uploaderId=${lib.user.recordist}`, 'ABEG'],
    ['another uploader', () => `uploaderId=${lib.user.designer}`, 'CDH'],
    ['a sample rate', () => 'sampleRate=44100', 'CG'],
    ['another sample rate', () => 'sampleRate=96000', 'D'],
    ['stereo', () => 'channels=2', 'BCF'],
    ['mono', () => 'channels=1', 'ADEGH'],
    ['minimum duration (inclusive)', () => 'minDuration=15', 'BCDF'],
    ['maximum duration (inclusive)', () => 'maxDuration=12', 'AEGH'],
    ['a duration range', () => 'minDuration=12&maxDuration=20', 'CDE'],
    ['minimum loudness (inclusive)', () => 'minLufs=-30', 'ABCE'],
    ['maximum loudness (inclusive)', () => 'maxLufs=-30', 'CDF'],
    ['a loudness range', () => 'minLufs=-36&maxLufs=-24', 'ACD'],
    ['minimum true peak (inclusive)', () => 'minTruePeak=-6', 'ABE'],
    ['maximum true peak (inclusive)', () => 'maxTruePeak=-12', 'CDF'],
    ['a true-peak range', () => 'minTruePeak=-15&maxTruePeak=-3', 'ABCD'],
    ['50 Hz hum', () => 'hum=50', 'BF'],
    ['60 Hz hum', () => 'hum=60', 'C'],
    ['no hum (measured takes only)', () => 'hum=none', 'ADE'],
    ['ready', () => 'status=ready', 'ABCDEF'],
    ['queued', () => 'status=queued', 'G'],
    ['failed', () => 'status=failed', 'H'],
    ['analysing (none)', () => 'status=analyzing', ''],
    ['filters combine with AND', () => `sessionId=${lib.session.roof}&tag=whine&maxLufs=-30`, 'D'],
    ['text and filters combine', () => 'q=hum&hum=60', 'C'],
    [
      'kind, loudness range and duration',
      () => 'sourceKind=computer&sourceKind=power-supply&minLufs=-45&maxLufs=-20&minDuration=10',
      'AF',
    ],
  ]
  for (const [name, qs, expected] of cases) {
    it(`${name}: ${expected || 'nothing'}`, async () => {
      expect(await found(qs())).toBe(expected)
    })
  }

  it('refuses malformed filter values with 400 VALIDATION_FAILED', async () => {
    for (const qs of [
      'hum=40',
      'status=done',
      'sort=loudest',
      'order=up',
      'pageSize=0',
      'pageSize=201',
      'page=0',
      'minLufs=abc',
      'sourceKind=toaster',
      'sampleRate=-1',
    ]) {
      const res = await reader.get(`/api/takes?${qs}`)
      expect(res.status, qs).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
  })
})

describe('sorting', () => {
  const value = (t: FixtureTake, sort: Exclude<TakeSort, 'relevance'>): string | number | null =>
    ({
      createdAt: t.createdAt,
      title: t.title,
      filename: t.filename,
      session: FIXTURE_SESSIONS[t.session].title,
      duration: t.duration,
      sampleRate: t.sampleRate,
      channels: t.channels,
      integratedLufs: t.lufs,
      truePeak: t.truePeak,
      loudnessRange: t.lra,
      samplePeak: t.samplePeak,
      noiseFloor: t.noiseFloor,
      hum: t.hum,
      status: t.status,
    })[sort]

  /** The expected order: by the column, takes without a value last either way, ties by id in the same direction. */
  const expectedOrder = (sort: Exclude<TakeSort, 'relevance'>, order: 'asc' | 'desc') => {
    const dir = order === 'asc' ? 1 : -1
    return [...FIXTURE_TAKES]
      .sort((a, b) => {
        const va = value(a, sort)
        const vb = value(b, sort)
        if (va === null || vb === null)
          return va === vb ? dir * (lib.take[a.key] - lib.take[b.key]) : va === null ? 1 : -1
        if (va !== vb) return va < vb ? -dir : dir
        return dir * (lib.take[a.key] - lib.take[b.key])
      })
      .map((t) => t.key)
      .join('')
  }

  for (const sort of TAKE_SORTS.filter((s): s is Exclude<TakeSort, 'relevance'> => s !== 'relevance')) {
    for (const order of ['asc', 'desc'] as const) {
      it(`sort=${sort}&order=${order}`, async () => {
        expect(await ordered(`sort=${sort}&order=${order}`)).toBe(expectedOrder(sort, order))
      })
    }
  }

  // A condition that holds for every take sends the query down the filtered path (the covering index).
  for (const sort of TAKE_SORTS.filter((s): s is Exclude<TakeSort, 'relevance'> => s !== 'relevance')) {
    it(`sort=${sort} on a filtered list`, async () => {
      expect(await ordered(`minDuration=0&sort=${sort}&order=desc`)).toBe(expectedOrder(sort, 'desc'))
      expect(await ordered(`sort=${sort}&order=asc&minDuration=0`)).toBe(expectedOrder(sort, 'asc'))
    })
  }

  it('spells out a few orders by hand', async () => {
    expect(await ordered('sort=integratedLufs&order=asc')).toBe('FDCABEGH')
    expect(await ordered('sort=integratedLufs&order=desc')).toBe('EBACDFHG')
    expect(await ordered('sort=duration&order=desc')).toBe('FBCDEAHG')
    expect(await ordered('sort=hum&order=asc')).toBe('BFCADEGH')
  })

  it('defaults: newest first without text, ascending for a named column', async () => {
    expect(await ordered('')).toBe(expectedOrder('createdAt', 'desc'))
    expect(await ordered('sort=title')).toBe(expectedOrder('title', 'asc'))
  })

  it('orders text matches by relevance by default (more and denser hits first)', async () => {
    // H has "crackle" three times in its description and as its only tag; F carries it as one of two tags.
    expect(await ordered('q=crackle')).toBe('HF')
    expect(await ordered('q=crackle&sort=relevance')).toBe('HF')
    expect(await ordered('q=crackle&sort=createdAt&order=asc')).toBe('FH')
    // The same ranking where other filters apply too.
    expect(await ordered('q=crackle&minDuration=0')).toBe('HF')
    expect(await ordered('q=crackle&minDuration=0&order=desc')).toBe('FH')
    expect(await ordered('q=crackle&status=ready')).toBe('F')
  })

  it('without text, sort=relevance lists newest first', async () => {
    expect(await ordered('sort=relevance')).toBe('HGFEDCBA')
    expect(await ordered('sort=relevance&status=ready')).toBe('FEDCBA')
  })
})

describe('paging', () => {
  it('cuts the ordered list into pages and reports the total on each', async () => {
    const pages: string[] = []
    for (const page of [1, 2, 3, 4]) {
      const res = await reader.get(`/api/takes?pageSize=3&page=${page}`)
      expect(res.status).toBe(200)
      expect(res.body).toMatchObject({ total: 8, page, pageSize: 3 })
      pages.push(res.body.items.map((t: { id: number }) => lib.keyOf(t.id)).join(''))
    }
    expect(pages).toEqual(['HGF', 'EDC', 'BA', ''])
  })

  it('pages a filtered, sorted list', async () => {
    const res = await reader.get('/api/takes?status=ready&sort=integratedLufs&order=desc&pageSize=2&page=2')
    expect(res.body.total).toBe(6)
    expect(res.body.items.map((t: { id: number }) => lib.keyOf(t.id)).join('')).toBe('AC')
  })

  it('reports the total on an empty page past the end of a filtered list', async () => {
    const res = await reader.get('/api/takes?status=ready&pageSize=4&page=3')
    expect(res.body).toMatchObject({ total: 6, page: 3, items: [] })
    const text = await reader.get('/api/takes?q=whine&pageSize=1&page=2')
    expect(text.body.total).toBe(2)
    expect(text.body.items).toHaveLength(1)
    const past = await reader.get('/api/takes?q=whine&pageSize=1&page=3')
    expect(past.body).toMatchObject({ total: 2, items: [] })
  })

  it('defaults to page 1 of 50', async () => {
    const res = await reader.get('/api/takes')
    expect(res.body).toMatchObject({ total: 8, page: 1, pageSize: 50 })
  })
})

describe('text search', () => {
  const cases: [string, string, string][] = [
    ['title words', 'transformer', 'B'],
    ['two title words in any order', 'whine charger', 'A'],
    ['file name', '0193', 'F'],
    ['a tag', 'drone', 'B'],
    ['a tag of two words', 'data burst', 'E'],
    ['a device name', 'workstation', 'F'],
    ['a device make and model', 'pedestal', 'CH'],
    ['an operating state', 'transmitting', 'E'],
    ['another operating state', 'seeking', 'F'],
    ['a capture session title', 'rooftop', 'CDH'],
    ['a capture session location', 'cellar', 'EF'],
    ['a bext description', 'housing', 'A'],
    ['a description', 'lead', 'H'],
    ['a prefix ("whin" finds "whine")', 'whin', 'AD'],
    ['any case', 'WHINE', 'AD'],
    ['a prefix of two words ("trans": transformer, transmitting)', 'trans', 'BE'],
    ['two prefixes', 'trans hand', 'E'],
    ['accents, folded as the index folds them', 'whîne', 'AD'],
    ['a device linked to two takes', 'laptop charger', 'AF'],
    ['words that occur nowhere together', 'transformer radio', ''],
  ]
  for (const [what, q, expected] of cases) {
    it(`finds by ${what}: "${q}" → ${expected || 'nothing'}`, async () => {
      expect(await found(`q=${encodeURIComponent(q)}`)).toBe(expected)
    })
  }

  it('follows edits: a new tag and a renamed device are searchable at once', async () => {
    const admin = await signedIn(server.url, 'admin')
    expect(await found('q=sizzle')).toBe('')
    await admin.patch(`/api/takes/${lib.take.G}`, { tags: ['sizzle'] }).expect(200)
    expect(await found('q=sizzle')).toBe('G')
    await admin.patch(`/api/sources/${lib.source.radio}`, { name: 'Handheld walkie radio' }).expect(200)
    expect(await found('q=walkie')).toBe('E')
    await admin.patch(`/api/takes/${lib.take.G}`, { tags: [] }).expect(200)
    expect(await found('q=sizzle')).toBe('')
  })
})

describe('hostile search strings', () => {
  const hostile = [
    '"',
    '""',
    '"unbalanced',
    "'",
    '-',
    '-hum',
    'hum -whine',
    '*',
    'hum*',
    '**',
    'NEAR',
    'NEAR(',
    'NEAR(hum whine, 2)',
    'AND',
    'OR',
    'NOT',
    'hum OR NOT whine',
    'OR NOT',
    'hum AND',
    '(',
    ')',
    '((hum)',
    'hum)',
    "'; DROP TABLE takes; --",
    '"; DELETE FROM takes; --',
    '%',
    '%%',
    '_',
    'hum%',
    '\\',
    '\\\\',
    'hum\\',
    '\u{1F50C}\u{26A1}',
    'hum \u{1F50C}',
    'x'.repeat(500),
    'hum '.repeat(125),
    'title:x',
    'title:hum',
    'tags:hum',
    '{title tags}:hum',
    '^',
    '^hum',
    'hum + whine',
    ':',
    '\u0000',
    '\u200b',
    ' ',
  ]
  it('answers 200 with a list (maybe empty) to each, and the library is untouched', async () => {
    for (const q of hostile) {
      const res = await reader.get(`/api/takes?q=${encodeURIComponent(q)}`)
      expect(res.status, JSON.stringify(q)).toBe(200)
      expect(Array.isArray(res.body.items), JSON.stringify(q)).toBe(true)
      expect(res.body.total).toBe(res.body.items.length)
    }
    expect((await search('')).total).toBe(FIXTURE_TAKES.length)
  })

  it('still finds the words inside operator soup', async () => {
    expect(await found(`q=${encodeURIComponent('(whine')}`)).toBe('AD')
    expect(await found(`q=${encodeURIComponent('whine)(')}`)).toBe('AD')
    expect(await found(`q=${encodeURIComponent('"hum"')}`)).toBe('BC')
    expect(await found(`q=${encodeURIComponent('transformer*')}`)).toBe('B')
    expect(await found(`q=${encodeURIComponent('^transformer')}`)).toBe('B')
    expect(await found(`q=${encodeURIComponent('-drone')}`)).toBe('B')
    expect(await found(`q=${encodeURIComponent("'; DROP TABLE takes; --")}`)).toBe('')
  })

  it('refuses a search longer than 500 characters with 400, not 500', async () => {
    const res = await reader.get(`/api/takes?q=${'y'.repeat(501)}`)
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })
})

describe('the indexes a sorted page walks', () => {
  it('carry every column a filter tests, after the sort column and the id', async () => {
    // A walk tests filters on the index entry it is on; a missing column would make SQLite read each wide take row.
    expect(SORT_INDEXES.length).toBeGreaterThan(10)
    for (const index of SORT_INDEXES) {
      const cols = (
        await sql<{ name: string }>`SELECT name FROM pragma_index_info(${index}) ORDER BY seqno`.execute(server.ctx.db)
      ).rows.map((r) => r.name)
      expect(cols[1], index).toBe('id')
      for (const c of FILTERED_COLUMNS) if (c !== cols[0]) expect(cols, index).toContain(c)
    }
  })
})
