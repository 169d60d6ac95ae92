// The pack routes, one group per concern; registered in this order so the route
// table (listRoutes) reads packs and items first, then builds, then delivery.
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { registerBuildRoutes } from './builds/builds.routes'
import { registerCurationRoutes } from './curation/curation.routes'
import { registerDeliveryRoutes } from './delivery/delivery.routes'

export function registerPackRoutes(api: Api, ctx: AppContext) {
  registerCurationRoutes(api, ctx)
  registerBuildRoutes(api, ctx)
  registerDeliveryRoutes(api, ctx)
}
