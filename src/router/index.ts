import { createRouter, createWebHistory, type RouteRecordRaw } from 'vue-router'
import type { Permission } from '@shared/permissions'
import { useAuthStore } from '@/stores/auth'
import { AREAS, HOME_BY_ROLE } from './areas'

declare module 'vue-router' {
  interface RouteMeta {
    /** Open without signing in. */
    public?: boolean
    /** The permission this view needs (from shared/permissions). */
    permission?: Permission
    title?: string
  }
}

const routes: RouteRecordRaw[] = [
  // '/' is resolved by the guard once it knows who is signed in: each role lands on the area it works in.
  { path: '/', name: 'home', component: { render: () => null } },
  {
    path: '/sign-in',
    name: 'sign-in',
    component: () => import('@/views/SignInView.vue'),
    meta: { public: true, title: 'Sign in' },
  },
  {
    path: '/join/:token',
    name: 'join',
    component: () => import('@/views/JoinView.vue'),
    meta: { public: true, title: 'Join the team' },
  },
  {
    path: '/reset/:token',
    name: 'reset',
    component: () => import('@/views/ResetView.vue'),
    meta: { public: true, title: 'New password' },
  },
  {
    path: '/captures',
    name: 'captures',
    component: () => import('@/views/CapturesView.vue'),
    meta: { permission: 'library:browse', title: 'Captures' },
  },
  {
    path: '/captures/:id(\\d+)',
    name: 'capture',
    component: () => import('@/views/CaptureView.vue'),
    meta: { permission: 'library:browse', title: 'Capture session' },
  },
  {
    path: '/takes/:id(\\d+)',
    name: 'take',
    component: () => import('@/views/TakeView.vue'),
    meta: { permission: 'library:browse', title: 'Listening bench' },
  },
  {
    path: '/library',
    name: 'library',
    component: () => import('@/views/LibraryView.vue'),
    meta: { permission: 'library:browse', title: 'Library' },
  },
  {
    path: '/library/tags',
    name: 'tags',
    component: () => import('@/views/TagManagerView.vue'),
    meta: { permission: 'takes:edit-any', title: 'Tags' },
  },
  {
    path: '/sources',
    name: 'sources',
    component: () => import('@/views/SourcesView.vue'),
    meta: { permission: 'library:browse', title: 'Sources' },
  },
  {
    path: '/packs',
    name: 'packs',
    component: () => import('@/views/PacksView.vue'),
    meta: { permission: 'packs:receive', title: 'Packs' },
  },
  {
    path: '/packs/:id(\\d+)',
    name: 'pack',
    component: () => import('@/views/PackView.vue'),
    meta: { permission: 'packs:receive', title: 'Pack' },
  },
  {
    path: '/share/:token',
    name: 'share',
    component: () => import('@/views/ShareView.vue'),
    meta: { public: true, title: 'Shared pack' },
  },
  {
    path: '/team',
    name: 'team',
    component: () => import('@/views/TeamView.vue'),
    meta: { permission: 'team:manage', title: 'Team' },
  },
  {
    path: '/outbox',
    name: 'outbox',
    component: () => import('@/views/OutboxView.vue'),
    meta: { permission: 'team:manage', title: 'Outbox' },
  },
  {
    path: '/not-allowed',
    name: 'not-allowed',
    component: () => import('@/views/NotAllowedView.vue'),
    meta: { title: 'Not for your role' },
  },
  {
    path: '/:rest(.*)*',
    name: 'not-found',
    component: () => import('@/views/NotFoundView.vue'),
    meta: { public: true, title: 'Not found' },
  },
]

export const router = createRouter({ history: createWebHistory(), routes })

/** The one guard: signed in for every non-public view, and the view's permission from the shared table. */
router.beforeEach(async (to) => {
  const auth = useAuthStore()
  const user = await auth.check()
  if (to.meta.public) return to.name === 'sign-in' && user ? firstArea(auth.can) : true
  if (!user) return { name: 'sign-in', query: to.name === 'home' ? {} : { next: to.fullPath } }
  if (to.name === 'home') return firstArea(auth.can)
  if (to.meta.permission && !auth.can(to.meta.permission)) return { name: 'not-allowed', query: { from: to.fullPath } }
  return true
})

router.afterEach((to) => {
  document.title = to.meta.title ? `${to.meta.title} · Strayfield` : 'Strayfield'
})

/** The signed-in user's home: the area their role works in (HOME_BY_ROLE), else the first area they may open. */
export function firstArea(can: (p: Permission) => boolean): string {
  const role = useAuthStore().user?.role
  const home = role ? HOME_BY_ROLE[role] : undefined
  if (home) return home
  return AREAS.find((a) => can(a.permission))?.path ?? '/not-allowed'
}
