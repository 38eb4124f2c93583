/**
 * The uniform loading / error / not-found / ready states of every store's loads. `track` runs a load and
 * applies its value only when no later load of the same state started meanwhile, so moving quickly
 * between two runs never shows the first one's data on the second one's page.
 */
import { computed, ref } from 'vue'
import { ApiError } from '../api/client'

export type LoadPhase = 'idle' | 'loading' | 'ready' | 'not-found' | 'error'

/** What a failed load becomes: a 404 is "not found", anything else an error with a message for people. */
export function classifyLoadError(e: unknown): { phase: 'not-found' | 'error'; message: string } {
  if (e instanceof ApiError && e.status === 404) return { phase: 'not-found', message: e.message }
  if (e instanceof ApiError) return { phase: 'error', message: e.message }
  return { phase: 'error', message: e instanceof Error ? e.message : String(e) }
}

export function useLoadState() {
  const phase = ref<LoadPhase>('idle')
  const error = ref<string | null>(null)
  let seq = 0

  /** Runs `load`; `apply` receives its value unless a newer load started. Resolves true when applied. */
  async function track<T>(load: () => Promise<T>, apply: (value: T) => void, opts: { quiet?: boolean } = {}): Promise<boolean> {
    const mine = ++seq
    if (!opts.quiet) phase.value = 'loading'
    error.value = null
    try {
      const value = await load()
      if (mine !== seq) return false
      apply(value)
      phase.value = 'ready'
      return true
    } catch (e) {
      if (mine !== seq) return false
      const c = classifyLoadError(e)
      phase.value = c.phase
      error.value = c.message
      return false
    }
  }

  function reset(): void {
    seq++
    phase.value = 'idle'
    error.value = null
  }

  return {
    phase, error, track, reset,
    loading: computed(() => phase.value === 'loading' || phase.value === 'idle'),
    ready: computed(() => phase.value === 'ready'),
  }
}

export type LoadState = ReturnType<typeof useLoadState>
