/**
 * A numeric route parameter (`:rid`, `:pid`, `:did`) as a ref that follows navigation: views `watch` it,
 * so moving from one run to another with the same view reloads. Not a positive integer: 0 (the load
 * then answers "not found").
 */
import { computed } from 'vue'
import { useRoute } from 'vue-router'

export function parseRouteId(raw: unknown): number {
  const n = typeof raw === 'string' && /^\d+$/.test(raw) ? Number(raw) : NaN
  return Number.isSafeInteger(n) && n > 0 ? n : 0
}

export function useRouteId(name: string) {
  const route = useRoute()
  return computed(() => parseRouteId(route.params[name]))
}
