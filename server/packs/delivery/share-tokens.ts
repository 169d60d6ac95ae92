// Share-link tokens: "<link id>.<nonce>.<signature>", the signature an
// HMAC-SHA-256 of "pack-share:<id>:<nonce>" under the app's session secret.
// The token names its row, so a lookup is one primary-key read; a forged or
// altered token fails the constant-time signature check before the database
// is asked anything. Revoking, expiry and the download limit live in the row,
// so a link can be withdrawn at any time ("signed, revocable"). The token can
// be shown again to the designer who made it (it is recomputed from the row).
import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto'

const PURPOSE = 'pack-share'

export const newNonce = () => randomBytes(12).toString('base64url')

function signature(secret: string, id: number, nonce: string): string {
  return createHmac('sha256', secret).update(`${PURPOSE}:${id}:${nonce}`).digest('base64url')
}

export function shareToken(secret: string, id: number, nonce: string): string {
  return `${id}.${nonce}.${signature(secret, id, nonce)}`
}

/** The link id of a well-signed token, or null. */
export function verifyShareToken(secret: string, token: string): { id: number; nonce: string } | null {
  const m = /^([1-9][0-9]{0,15})\.([A-Za-z0-9_-]{8,64})\.([A-Za-z0-9_-]{43})$/.exec(token)
  if (!m) return null
  const id = Number(m[1])
  const want = Buffer.from(signature(secret, id, m[2]))
  const got = Buffer.from(m[3])
  return want.length === got.length && timingSafeEqual(want, got) ? { id, nonce: m[2] } : null
}
