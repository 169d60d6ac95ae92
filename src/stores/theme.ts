import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref, watch } from 'vue'

export type Theme = 'dark' | 'light'
const KEY = 'strayfield.theme'

/** Dark by default; light on request, remembered per browser. */
export const useThemeStore = defineStore('theme', () => {
  const theme = ref<Theme>((localStorage.getItem(KEY) as Theme | null) ?? 'dark')
  const apply = () => {
    document.documentElement.classList.toggle('dark', theme.value === 'dark')
    document.documentElement.classList.toggle('light', theme.value === 'light')
  }
  watch(theme, (t) => {
    localStorage.setItem(KEY, t)
    apply()
  })
  apply()
  const toggle = () => (theme.value = theme.value === 'dark' ? 'light' : 'dark')
  return { theme, toggle }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useThemeStore, import.meta.hot))
