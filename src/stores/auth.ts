import { acceptHMRUpdate, defineStore } from 'pinia'
import { computed, ref } from 'vue'
import { can as canRole, type Permission } from '@shared/permissions'
import type { AppInfo, User } from '@shared/schemas/auth'
import { ApiError, api, resetCsrf } from '@/api/client'

export const useAuthStore = defineStore('auth', () => {
  const user = ref<User | null>(null)
  const info = ref<AppInfo | null>(null)
  const checked = ref(false)

  const signedIn = computed(() => user.value !== null)
  const can = (p: Permission) => canRole(user.value?.role, p)

  async function loadInfo() {
    info.value ??= await api.get<AppInfo>('/api/app-info')
    return info.value
  }

  /** Who is signed in, asked once per page load (and again after sign-in or out). */
  async function check(): Promise<User | null> {
    if (checked.value) return user.value
    try {
      user.value = (await api.get<{ user: User }>('/api/auth/me')).user
    } catch (e) {
      if (!(e instanceof ApiError && e.status === 401)) throw e
      user.value = null
    }
    checked.value = true
    return user.value
  }

  async function signIn(email: string, password: string) {
    const res = await api.post<{ user: User }>('/api/auth/login', { email, password })
    resetCsrf()
    user.value = res.user
    checked.value = true
  }

  async function signOut() {
    await api.post('/api/auth/logout')
    resetCsrf()
    user.value = null
  }

  async function acceptInvitation(token: string, name: string, password: string) {
    const res = await api.post<{ user: User }>(`/api/invitations/${token}/accept`, { name, password })
    resetCsrf()
    user.value = res.user
    checked.value = true
  }

  const requestReset = (email: string) => api.post('/api/auth/password-reset', { email })
  const completeReset = (token: string, password: string) => api.post(`/api/auth/password-reset/${token}`, { password })

  /** The server signed us out (deactivated, expired): forget the user. */
  function forget() {
    user.value = null
    resetCsrf()
  }

  return {
    user,
    info,
    checked,
    signedIn,
    can,
    loadInfo,
    check,
    signIn,
    signOut,
    acceptInvitation,
    requestReset,
    completeReset,
    forget,
  }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useAuthStore, import.meta.hot))
