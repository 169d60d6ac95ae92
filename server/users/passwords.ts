import { randomBytes, scrypt, timingSafeEqual, createHash } from 'node:crypto'
import { promisify } from 'node:util'

// Node's own scrypt (no native dependency to build): N=2^15, r=8, p=1, 64-byte key,
// a fresh 16-byte salt per user. Stored as "scrypt$N$r$p$salt$hash" so the cost can rise later.
const scryptAsync = promisify(scrypt) as (pw: string, salt: Buffer, len: number, opts: object) => Promise<Buffer>
const N = 2 ** 15
const R = 8
const P = 1
const KEYLEN = 64
const MAXMEM = 64 * 1024 * 1024

export async function hashPassword(password: string): Promise<string> {
  const salt = randomBytes(16)
  const hash = await scryptAsync(password, salt, KEYLEN, { N, r: R, p: P, maxmem: MAXMEM })
  return ['scrypt', N, R, P, salt.toString('base64'), hash.toString('base64')].join('$')
}

export async function verifyPassword(password: string, stored: string): Promise<boolean> {
  const [kind, n, r, p, salt, hash] = stored.split('$')
  if (kind !== 'scrypt' || !salt || !hash) return false
  const expected = Buffer.from(hash, 'base64')
  const actual = await scryptAsync(password, Buffer.from(salt, 'base64'), expected.length, {
    N: Number(n),
    r: Number(r),
    p: Number(p),
    maxmem: MAXMEM,
  })
  return actual.length === expected.length && timingSafeEqual(actual, expected)
}

/** A hash of nothing, used to spend the same time on unknown e-mail addresses. */
let dummy: Promise<string> | null = null
export const dummyHash = () => (dummy ??= hashPassword('not-a-real-password-at-all'))

/** One-time tokens for invitations and resets: the link carries the token, the database only its SHA-256. */
export function newToken(): { token: string; hash: string } {
  const token = randomBytes(32).toString('base64url')
  return { token, hash: hashToken(token) }
}
export const hashToken = (token: string) => createHash('sha256').update(token).digest('hex')
