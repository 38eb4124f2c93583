import { createApp } from 'vue'
import { createPinia } from 'pinia'
import 'element-plus/dist/index.css'
import '@fontsource/fira-sans/400.css'
import '@fontsource/fira-sans/500.css'
import '@fontsource/fira-sans/600.css'
import './assets/main.css'

import App from './App.vue'
import router from './router'
import { setUnauthenticatedHandler } from './api/client'
import { useSessionStore } from './stores/useSessionStore'

const app = createApp(App)
const pinia = createPinia()
app.use(pinia)
app.use(router)

// A session that ends while the page is open (expired, signed out elsewhere): forget it and go to
// sign-in, coming back here afterwards.
setUnauthenticatedHandler(() => {
  const session = useSessionStore(pinia)
  if (!session.isSignedIn) return
  session.clear()
  const here = router.currentRoute.value
  if (!here.meta.guest) void router.replace({ name: 'signin', query: { redirect: here.fullPath } })
})

app.mount('#app')
