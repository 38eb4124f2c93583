import type { RouteLocationRaw } from 'vue-router'
import { useSessionStore } from '@/stores/useSessionStore'

/** Where a signed-in user lands: their home workspace's library, or the no-workspace page. */
export function homeLocation(): RouteLocationRaw {
  const session = useSessionStore()
  const ws = session.homeWorkspace
  return ws ? { name: 'library', params: { ws: ws.slug } } : { name: 'home' }
}
