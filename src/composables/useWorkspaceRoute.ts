/**
 * The workspace the page belongs to, from the route's `:ws` slug, and a helper for links inside it:
 * `link('library')`, `link('model', { modelId: 3 })`.
 */
import { computed } from 'vue'
import { useRoute, type RouteLocationRaw } from 'vue-router'
import { useSessionStore } from '@/stores/useSessionStore'

export function useWorkspaceRoute() {
  const route = useRoute()
  const session = useSessionStore()

  const slug = computed(() => (typeof route.params.ws === 'string' ? route.params.ws : ''))
  const workspace = computed(() => session.workspaceBySlug(slug.value))

  function link(name: string, params: Record<string, string | number> = {}, query?: Record<string, string>): RouteLocationRaw {
    return { name, params: { ...params, ws: slug.value }, query }
  }

  return { slug, workspace, link }
}
