/**
 * Following one run's progress for the live page (server-sent events): polls the run row, so it works
 * whichever process fits, reports each change once, ends with the run, and asks for a keep-alive when
 * nothing was reported for a while. Knows nothing of HTTP: the route turns the calls into SSE frames.
 */
import type { Db } from '../db/client'
import { getRunState } from './runs'
import { terminalStatuses, type RunStatus } from '../../shared/api/runs'

export type RunState = NonNullable<Awaited<ReturnType<typeof getRunState>>>

export interface RunProgressSink {
  /** the run row changed (status, progress, error, cancel flag) */
  progress(state: RunState): void
  /** the run settled, or its row is gone (`missing`); nothing follows */
  end(info: { status: RunStatus | 'missing'; error?: string | null }): void
  /** nothing was reported for `keepAliveMs` */
  keepAlive(): void
  /** the row could not be read (database away); nothing follows */
  failed(): void
}

/** How often the row is read, and after how long a quiet stream gets a keep-alive. */
export const RUN_POLL_MS = 250
export const RUN_KEEPALIVE_MS = 15_000

/**
 * Reports `first` at once, then polls until the run ends; returns `stop` (call it when the client leaves).
 * Never two reads at once: a poll that finds the previous read still pending is skipped.
 */
export function followRun(db: Db, workspaceId: number, runId: number, first: RunState, sink: RunProgressSink, timing = { pollMs: RUN_POLL_MS, keepAliveMs: RUN_KEEPALIVE_MS }): () => void {
  let last = ''
  let closed = false
  let busy = false
  let sinceReport = Date.now()
  const stop = () => { closed = true; clearInterval(timer) }
  const report = (state: RunState | null) => {
    if (closed) return
    if (!state) { stop(); sink.end({ status: 'missing' }); return }
    const key = JSON.stringify(state)
    if (key !== last) { last = key; sinceReport = Date.now(); sink.progress(state) }
    if (terminalStatuses.includes(state.status as RunStatus)) { stop(); sink.end({ status: state.status as RunStatus, error: state.error }); return }
    if (Date.now() - sinceReport > timing.keepAliveMs) { sinceReport = Date.now(); sink.keepAlive() }
  }
  const timer = setInterval(() => {
    if (busy || closed) return
    busy = true
    getRunState(db, workspaceId, runId).then(report).catch(() => { if (!closed) { stop(); sink.failed() } }).finally(() => { busy = false })
  }, timing.pollMs)
  report(first)
  return stop
}
