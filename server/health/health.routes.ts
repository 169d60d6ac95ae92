import { DEMO_ACCOUNTS, DEMO_PASSWORD } from '../demo/demo-team'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'

export function registerHealthRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/health', 'public', (_req, res) => {
    res.json({ ok: true })
  })

  /** What the sign-in page may show before anyone signs in. */
  api.route('get', '/app-info', 'public', (_req, res) => {
    const demo = ctx.config.demo
    res.json({
      demo,
      demoAccounts: demo ? DEMO_ACCOUNTS.map(({ email, role }) => ({ email, role })) : [],
      demoPassword: demo ? DEMO_PASSWORD : null,
    })
  })
}
