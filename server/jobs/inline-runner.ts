/**
 * The in-process JobRunner used until the job system (worker threads / pg-boss) is attached: each run
 * executes off the request path (after the reply, from the event loop's next turn) with `executeRun`,
 * one at a time in queue order. The fit yields to the event loop between iterations, so the server keeps
 * answering and a cancel (the row's flag, polled by executeRun, or `cancel()` here) stops it.
 */
import type { Db } from '../db/client'
import type { JobRunner } from './types'
import { executeRun } from '../services/fit-execution'

export function createInlineRunner(db: Db, opts: { concurrency?: number } = {}): JobRunner {
  const concurrency = Math.max(1, opts.concurrency ?? 1)
  const queue: number[] = []
  const active = new Map<number, { controller: AbortController; done: Promise<void> }>()
  const idleWaiters: (() => void)[] = []
  let closed = false

  const settleIdle = () => {
    if (queue.length === 0 && active.size === 0) while (idleWaiters.length) idleWaiters.shift()!()
  }

  const pump = () => {
    while (!closed && active.size < concurrency && queue.length) {
      const runId = queue.shift()!
      if (active.has(runId)) continue
      const controller = new AbortController()
      const done = executeRun(db, runId, { signal: controller.signal, workerId: `inline-${process.pid}` })
        .then(() => undefined)
        .catch((e) => { if (process.env.NODE_ENV !== 'test') console.error(`[pewter] run ${runId}:`, e) })
        .finally(() => {
          active.delete(runId)
          setImmediate(() => { pump(); settleIdle() })
        })
      active.set(runId, { controller, done })
    }
    settleIdle()
  }

  return {
    async enqueue(runId) {
      if (closed) throw new Error('the job runner is closed')
      if (!queue.includes(runId) && !active.has(runId)) queue.push(runId)
      setImmediate(pump)
    },
    async cancel(runId) {
      const i = queue.indexOf(runId)
      if (i >= 0) queue.splice(i, 1)
      active.get(runId)?.controller.abort()
      // a run removed from the queue never reaches executeRun: settle it as executeRun would
      if (i >= 0) await executeRun(db, runId, {}).catch(() => undefined)
      settleIdle()
    },
    idle() {
      if (queue.length === 0 && active.size === 0) return Promise.resolve()
      return new Promise<void>((resolve) => idleWaiters.push(resolve))
    },
    async close() {
      closed = true
      queue.length = 0
      for (const a of active.values()) a.controller.abort()
      await Promise.all([...active.values()].map((a) => a.done))
      settleIdle()
    },
  }
}
