import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import type {
  AddItemBody,
  BuildChanges,
  CreatePackBody,
  NamingPreview,
  Pack,
  PackBuild,
  PackDetail,
  PackItem,
  ShareLink,
  UpdateItemBody,
  UpdatePackBody,
} from '@shared/schemas/packs'
import { api } from '@/api/client'

/** Packs: curating, building, publishing and sharing. */
export const usePacksStore = defineStore('packs', () => {
  const packs = ref<Pack[]>([])
  const current = ref<PackDetail | null>(null)
  const builds = ref<PackBuild[]>([])

  async function load() {
    packs.value = (await api.get<{ packs: Pack[] }>('/api/packs')).packs
  }
  async function open(id: number) {
    // Builds first: once a build shows done, the pack read after it already holds its rendered numbers.
    const list = (await api.get<{ builds: PackBuild[] }>(`/api/packs/${id}/builds`)).builds
    current.value = (await api.get<{ pack: PackDetail }>(`/api/packs/${id}`)).pack
    builds.value = list
  }
  const reload = () => (current.value ? open(current.value.id) : Promise.resolve())

  const create = async (body: Partial<CreatePackBody> & { name: string }) =>
    (await api.post<{ pack: Pack }>('/api/packs', body)).pack
  async function update(patch: UpdatePackBody) {
    await api.patch(`/api/packs/${current.value!.id}`, patch)
    await reload()
  }
  async function remove(id: number) {
    await api.delete(`/api/packs/${id}`)
    packs.value = packs.value.filter((p) => p.id !== id)
  }

  async function addItems(packId: number, items: AddItemBody[]) {
    const res = await api.post<{ items: PackItem[] }>(`/api/packs/${packId}/items/batch`, { items })
    if (current.value?.id === packId) await reload()
    return res.items
  }
  async function updateItem(itemId: number, patch: UpdateItemBody) {
    await api.patch(`/api/packs/${current.value!.id}/items/${itemId}`, patch)
    await reload()
  }
  async function removeItem(itemId: number) {
    await api.delete(`/api/packs/${current.value!.id}/items/${itemId}`)
    await reload()
  }
  async function reorder(itemIds: number[]) {
    await api.put(`/api/packs/${current.value!.id}/items/order`, { itemIds })
    await reload()
  }

  async function build() {
    const { build } = await api.post<{ build: PackBuild }>(`/api/packs/${current.value!.id}/builds`)
    await reload()
    return build
  }
  const getBuild = async (id: number) => (await api.get<{ build: PackBuild }>(`/api/pack-builds/${id}`)).build
  async function publish(buildId: number, note: string) {
    await api.post(`/api/pack-builds/${buildId}/publish`, { note })
    await reload()
  }
  /** The computed starting text of a build's "what changed" note. */
  const changes = async (buildId: number) =>
    (await api.get<{ changes: BuildChanges }>(`/api/pack-builds/${buildId}/changes`)).changes
  /** Output names the template would give the current pack's items. */
  /** `limit` and `layout`: a profile's name limit and folders to preview (omitted: the pack's saved profile). */
  const namingPreview = async (template: string, o: { limit?: number | null; layout?: 'flat' | 'by-kind' } = {}) =>
    (
      await api.get<NamingPreview>(
        `/api/packs/${current.value!.id}/naming-preview?template=${encodeURIComponent(template)}` +
          (o.limit ? `&maxNameLength=${o.limit}` : o.limit === null ? '&maxNameLength=80' : '') +
          (o.layout ? `&layout=${o.layout}` : ''),
      )
    ).names

  async function follow(packId: number, on: boolean) {
    if (on) await api.post(`/api/packs/${packId}/follow`)
    else await api.delete(`/api/packs/${packId}/follow`)
    packs.value = packs.value.map((p) => (p.id === packId ? { ...p, following: on } : p))
    if (current.value?.id === packId) current.value = { ...current.value, following: on }
  }

  const shareLinks = async (buildId: number) =>
    (await api.get<{ links: ShareLink[] }>(`/api/pack-builds/${buildId}/share-links`)).links
  const createShareLink = async (buildId: number, expiresAt: string, maxDownloads: number | null) =>
    (await api.post<{ link: ShareLink }>(`/api/pack-builds/${buildId}/share-links`, { expiresAt, maxDownloads })).link
  const revokeShareLink = (id: number) => api.delete(`/api/share-links/${id}`)

  const previewUrl = (itemId: number) => `/api/packs/${current.value!.id}/items/${itemId}/preview`
  /** One item of the published version, as a download (producers). */
  const itemDownloadUrl = (itemId: number) =>
    current.value?.publishedBuild
      ? `/api/pack-builds/${current.value.publishedBuild.id}/items/${itemId}/download`
      : null

  return {
    packs,
    current,
    builds,
    load,
    open,
    reload,
    create,
    update,
    remove,
    addItems,
    updateItem,
    removeItem,
    reorder,
    build,
    getBuild,
    publish,
    changes,
    namingPreview,
    follow,
    shareLinks,
    createShareLink,
    revokeShareLink,
    previewUrl,
    itemDownloadUrl,
  }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(usePacksStore, import.meta.hot))
