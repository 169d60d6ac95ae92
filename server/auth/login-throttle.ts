// Sign-in limits that cannot lock an account out. Failures are counted per
// account and per client address only once a password check has failed (a
// request still in flight counts as nothing). After a few free failures each
// further attempt must wait a delay that doubles with every failure, up to a
// cap (a minute for an account by default): the real owner waits at most that
// long, never a fixed lock-out window, and a success clears the account's count.
// Attempts on one account are checked one after another, so a burst of guesses
// sent at once meets the delays too; a burst of correct sign-ins simply queues.
export interface ThrottleRule {
  /** Failures before any delay. */
  free: number
  /** Delay after the first failure past the free ones; doubles with each further failure. */
  baseMs: number
  maxMs: number
  /** A key's failures are forgotten this long after its last failure. */
  forgetMs: number
}

interface Entry {
  failures: number
  lastAt: number
}

const MAX_KEYS = 50_000

export class LoginThrottle {
  private entries = new Map<string, Entry>()
  private tails = new Map<string, Promise<unknown>>()

  constructor(private rule: ThrottleRule) {}

  /** Milliseconds until the next attempt on this key is checked (0: now). */
  waitMs(key: string, now = Date.now()): number {
    const e = this.entries.get(key)
    if (!e || now - e.lastAt > this.rule.forgetMs || e.failures < this.rule.free) return 0
    const delay = Math.min(this.rule.maxMs, this.rule.baseMs * 2 ** (e.failures - this.rule.free))
    return Math.max(0, e.lastAt + delay - now)
  }

  fail(key: string, now = Date.now()): void {
    const e = this.entries.get(key)
    const fresh = !e || now - e.lastAt > this.rule.forgetMs
    this.entries.set(key, { failures: fresh ? 1 : e.failures + 1, lastAt: now })
    if (this.entries.size > MAX_KEYS) this.forgetOld(now)
  }

  succeed(key: string): void {
    this.entries.delete(key)
  }

  /** Runs `check` after every earlier check of the same key has finished. */
  serial<T>(key: string, check: () => Promise<T>): Promise<T> {
    const before = this.tails.get(key) ?? Promise.resolve()
    const mine = before.then(check, check)
    const tail = mine.catch(() => undefined)
    this.tails.set(key, tail)
    void tail.then(() => {
      if (this.tails.get(key) === tail) this.tails.delete(key)
    })
    return mine
  }

  private forgetOld(now: number): void {
    for (const [k, e] of this.entries) if (now - e.lastAt > this.rule.forgetMs) this.entries.delete(k)
  }
}
