/**
 * Follows a run's progress over server-sent events (GET …/runs/:rid/events); the stream ends when the
 * run does, and the caller reloads the run then. EventSource reconnects by itself after a drop, and
 * the server resends the current state, so a page that reconnects resumes. Each state is checked
 * against its schema from shared/api like every other reply.
 */
import { onBeforeUnmount, ref } from 'vue'
import { runStateEvent, type RunStateEvent } from '@shared/api/runs'
import { runEventsUrl } from '../api/runs'

/** An event's state checked against the shared schema; one that is not JSON or not of that shape is passed over. */
export function readRunState(data: unknown): RunStateEvent | null {
  if (typeof data !== 'string') return null
  try {
    const parsed = runStateEvent.safeParse(JSON.parse(data))
    return parsed.success ? parsed.data : null
  } catch {
    return null
  }
}

export function useRunEvents(onEnd: () => void) {
  const state = ref<RunStateEvent | null>(null)
  let source: EventSource | null = null
  function start(ws: string, rid: number) {
    stop()
    source = new EventSource(runEventsUrl(ws, rid))
    source.addEventListener('progress', (e) => {
      const next = readRunState(e.data)
      if (next) state.value = next
    })
    source.addEventListener('end', () => { stop(); onEnd() })
  }
  function stop() {
    source?.close()
    source = null
  }
  onBeforeUnmount(stop)
  return { state, start, stop }
}
