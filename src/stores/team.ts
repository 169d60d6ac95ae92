import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import type { Role } from '@shared/permissions'
import type { Invitation, OutboxMessage, TeamMember } from '@shared/schemas/team'
import { api } from '@/api/client'

export const useTeamStore = defineStore('team', () => {
  const members = ref<TeamMember[]>([])
  const invitations = ref<Invitation[]>([])
  const outbox = ref<OutboxMessage[]>([])
  const transport = ref('')

  async function load() {
    const [u, i] = await Promise.all([
      api.get<{ users: TeamMember[] }>('/api/users'),
      api.get<{ invitations: Invitation[] }>('/api/invitations'),
    ])
    members.value = u.users
    invitations.value = i.invitations
  }

  async function update(id: number, patch: { role?: Role; active?: boolean }) {
    const { user } = await api.patch<{ user: TeamMember }>(`/api/users/${id}`, patch)
    members.value = members.value.map((m) => (m.id === id ? user : m))
  }

  async function invite(email: string, role: Role) {
    const { invitation } = await api.post<{ invitation: Invitation }>('/api/invitations', { email, role })
    invitations.value = [invitation, ...invitations.value]
  }

  async function resend(id: number) {
    const { invitation } = await api.post<{ invitation: Invitation }>(`/api/invitations/${id}/resend`)
    invitations.value = invitations.value.map((i) => (i.id === id ? invitation : i))
  }

  /** Withdraws an invitation that was not accepted yet: its link stops working. */
  async function withdraw(id: number) {
    await api.delete(`/api/invitations/${id}`)
    invitations.value = invitations.value.filter((i) => i.id !== id)
  }

  async function loadOutbox() {
    const res = await api.get<{ messages: OutboxMessage[]; transport: string }>('/api/outbox')
    outbox.value = res.messages
    transport.value = res.transport
  }

  return { members, invitations, outbox, transport, load, update, invite, resend, withdraw, loadOutbox }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useTeamStore, import.meta.hot))
