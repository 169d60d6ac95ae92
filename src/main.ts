import { createApp } from 'vue'
import { createPinia } from 'pinia'
import ElementPlus from 'element-plus'
import '@fontsource/space-grotesk/400.css'
import '@fontsource/space-grotesk/500.css'
import '@fontsource/space-grotesk/600.css'
import '@fontsource/space-grotesk/700.css'
import './styles/index.scss'
import App from './App.vue'
import { router } from './router'
import { useThemeStore } from './stores/theme'
import { strayfieldLocale } from './components/ui/locale'
import { applyA11yFallbacks } from './components/ui/a11y'

const app = createApp(App)
app.use(createPinia())
useThemeStore()
app.use(router)
// Element Plus speaks with our own words for empty lists and no match (src/components/ui/locale.ts).
app.use(ElementPlus, { locale: strayfieldLocale })
app.mount('#app')
applyA11yFallbacks()
