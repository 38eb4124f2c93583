/**
 * Follows a run's progress over server-sent events (GET …/runs/:rid/events); the stream ends when the
 * run does, and the caller reloads the run then. EventSource reconnects by itself after a drop, and
 * the server resends the current state, so a page that reconnects resumes.
 */
import { onBeforeUnmount, ref } from 'vue'
import type { RunProgress, RunStatus } from '@shared/api/runs'
import { runEventsUrl } from '@/api/runs'

export interface RunState { status: RunStatus; progress: RunProgress | null; error: string | null; cancelRequested: boolean }

export function useRunEvents(onEnd: () => void) {
  const state = ref<RunState | null>(null)
  let source: EventSource | null = null
  function start(ws: string, rid: number) {
    stop()
    source = new EventSource(runEventsUrl(ws, rid))
    source.addEventListener('progress', (e) => { state.value = JSON.parse((e as MessageEvent).data) as RunState })
    source.addEventListener('end', () => { stop(); onEnd() })
  }
  function stop() {
    source?.close()
    source = null
  }
  onBeforeUnmount(stop)
  return { state, start, stop }
}
