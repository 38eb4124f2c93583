/**
 * A pool of worker threads (piscina) that executes runs: claims each run on its row, keeps the claim's
 * heartbeat fresh from this (never blocked) thread, forwards cancellation read from the row to the
 * worker thread, enforces the time limit, and makes sure every run it took ends in a final state.
 * Used by the embedded runner (web process) and by `npm run worker` (pg-boss consumer).
 */
import { MessageChannel, type MessagePort } from 'node:worker_threads'
import { threadExecArgv } from './thread-argv'
import { hostname } from 'node:os'
import { randomBytes } from 'node:crypto'
import { Piscina } from 'piscina'
import type { Db } from '../db/client'
import { claimRun, forceStatus, heartbeat, releaseClaims, runStatus, settleRun, type ClaimResult } from './claims'
import type { HelperTask, RunTask } from './thread-task'
import { FanOut, type FanOutRecord, type ThreadMessage } from './fan-out'
import { newAbortFlag, raiseAbortFlag, type AbortFlag } from './abort-flag'
import { runs } from '../db/schema'
import { and, eq, sql } from 'drizzle-orm'

export interface RunPoolOptions {
  db: Db
  databaseUrl: string
  threads: number
  executorUrl: string
  timeoutSeconds: number
  staleSeconds: number
  /** heartbeat and cancel-flag poll period (default 1000 ms) */
  heartbeatMs?: number
  /** how long a cancelled or timed-out fit may take to stop by itself before its thread is terminated */
  stopGraceMs?: number
  workerId?: string
  /** keep every thread alive and loaded (servers; the tests leave it off) */
  warm?: boolean
  /** called once a run this pool executed is final (notifications) */
  onSettled?: (runId: number) => Promise<void>
  log?: (message: string) => void
}

export type ExecuteOutcome = 'executed' | Exclude<ClaimResult, { claimed: true }>['reason']

interface Active {
  port: MessagePort
  hard: AbortController
  stop: null | 'cancel' | 'timeout'
  timers: NodeJS.Timeout[]
  fanOut: FanOut | null
  helpers: MessagePort[]
  /** shared with the run's and its helpers' threads: raised on cancel or timeout */
  flag: AbortFlag
}

export const newWorkerId = (kind: string) => `${kind}@${hostname()}:${process.pid}:${randomBytes(3).toString('hex')}`

export { threadExecArgv } from './thread-argv'

export class RunPool {
  readonly workerId: string
  private piscina: Piscina
  private active = new Map<number, Active>()
  private waiters: (() => void)[] = []
  private running = 0
  private inFlight = new Set<Promise<unknown>>()
  private beat: NodeJS.Timeout
  private closed = false
  private abandoning = false
  /** how the last multi-start fits were spread (runs executed here), for tests and logs */
  readonly fanOuts = new Map<number, FanOutRecord>()

  constructor(private o: RunPoolOptions) {
    this.workerId = o.workerId ?? newWorkerId('pool')
    this.piscina = new Piscina({
      filename: new URL('./thread-task.ts', import.meta.url).href,
      maxThreads: o.threads,
      minThreads: o.warm ? o.threads : 0,
      idleTimeout: 30_000,
      execArgv: threadExecArgv(),
    })
    this.beat = setInterval(() => { void this.tick() }, o.heartbeatMs ?? 1000)
    this.beat.unref()
  }

  get size() { return this.o.threads }
  get busy() { return this.running }

  /**
   * Boots every thread now (module loading takes seconds per thread), so that the first fits and the
   * helpers of a multi-start fit start at once. Resolves with the thread ids.
   */
  async warmUp(limitMs = 60_000): Promise<number[]> {
    const seen = new Set<number>()
    const end = Date.now() + limitMs
    // piscina hands a task only to a thread that is up: ping in parallel until every thread answered
    while (seen.size < this.o.threads && Date.now() < end && !this.closed) {
      const ids = await Promise.all(Array.from({ length: this.o.threads }, () => this.piscina.run(null, { name: 'ping' }) as Promise<number>))
      for (const id of ids) seen.add(id)
    }
    return [...seen].sort((a, b) => a - b)
  }

  /**
   * Runs a named export of thread-task.ts (not a run: no claim, no heartbeat) on one of the pool's
   * threads, e.g. a cost landscape. Queues behind the threads' current work; `signal` terminates it.
   */
  async runHelperTask<T>(name: string, task: unknown, signal?: AbortSignal): Promise<T> {
    if (this.closed) throw new Error('the worker pool is closed')
    // fits go first: such a task takes a thread only when no fit is waiting for one
    await this.lowSlot(signal)
    try {
      if (this.closed) throw new Error('the worker pool is closed')
      return await (this.piscina.run(task, { name, ...(signal ? { signal } : {}) }) as Promise<T>)
    } finally {
      this.release()
    }
  }

  private lowWaiters: (() => void)[] = []

  private async lowSlot(signal?: AbortSignal) {
    while (this.running >= this.o.threads || this.waiters.length > 0) {
      if (signal?.aborted) throw signal.reason ?? new Error('aborted')
      await new Promise<void>((r) => {
        this.lowWaiters.push(r)
        signal?.addEventListener('abort', () => { this.lowWaiters = this.lowWaiters.filter((w) => w !== r); r() }, { once: true })
      })
    }
    this.running++
  }

  /** Executes a run when a thread is free; resolves once the run is final (or was not ours to run). */
  execute(runId: number): Promise<ExecuteOutcome> {
    const p = this.executeInner(runId)
    this.inFlight.add(p)
    void p.finally(() => this.inFlight.delete(p)).catch(() => {})
    return p
  }

  private async slot() {
    while (this.running >= this.o.threads) await new Promise<void>((r) => this.waiters.push(r))
    this.running++
  }

  private release() {
    this.running--
    const next = this.waiters.shift() ?? this.lowWaiters.shift()
    next?.()
  }

  private async executeInner(runId: number): Promise<ExecuteOutcome> {
    if (this.closed) return 'taken'
    await this.slot()
    try {
      if (this.closed) return 'taken'
      const claim = await claimRun(this.o.db, runId, this.workerId, this.o.staleSeconds)
      if (!claim.claimed) {
        if (claim.reason === 'cancelled') await this.settled(runId)
        return claim.reason
      }
      this.o.log?.(`run ${runId}: attempt ${claim.attempt} on ${this.workerId}`)
      await this.runClaimed(runId)
      await this.settled(runId)
      return 'executed'
    } finally {
      this.release()
    }
  }

  private async runClaimed(runId: number) {
    const { port1, port2 } = new MessageChannel()
    const a: Active = { port: port1, hard: new AbortController(), stop: null, timers: [], fanOut: null, helpers: [], flag: newAbortFlag() }
    this.active.set(runId, a)
    port1.on('message', (m: ThreadMessage) => this.onRunMessage(runId, a, m))
    a.timers.push(setTimeout(() => this.requestStop(runId, 'timeout'), this.o.timeoutSeconds * 1000))
    const task: RunTask = { runId, databaseUrl: this.o.databaseUrl, workerId: this.workerId, executorUrl: this.o.executorUrl, port: port2, abortFlag: a.flag }
    let failure: unknown = null
    try {
      await this.piscina.run(task, { transferList: [port2], signal: a.hard.signal })
    } catch (err) {
      failure = err
    } finally {
      for (const t of a.timers) clearTimeout(t)
      port1.close()
      for (const h of a.helpers) h.postMessage({ abort: 'run ended' })
      if (a.fanOut) {
        this.fanOuts.set(runId, a.fanOut.record())
        if (this.fanOuts.size > 50) this.fanOuts.delete(this.fanOuts.keys().next().value!)
      }
      this.active.delete(runId)
    }
    const { db } = this.o
    const limit = `The fit exceeded the time limit of ${this.o.timeoutSeconds} s (PEWTER_JOB_TIMEOUT_SECONDS) and was stopped.`
    if (a.stop === 'timeout') {
      const now = await runStatus(db, runId)
      if (now?.status !== 'succeeded') await forceStatus(db, runId, this.workerId, 'failed', limit)
      return
    }
    if (failure) {
      if (this.abandoning) return
      if (a.stop === 'cancel') await forceStatus(db, runId, this.workerId, 'cancelled', 'Cancelled; the fit was stopped.')
      else await settleRun(db, runId, this.workerId, 'failed', `The fit stopped with an error: ${failure instanceof Error ? failure.message : String(failure)}`)
      return
    }
    await settleRun(db, runId, this.workerId, a.stop === 'cancel' ? 'cancelled' : 'failed', a.stop === 'cancel' ? 'Cancelled.' : 'The fit ended without storing a result.')
  }

  /** Messages from a run's thread: its multi-start plans to share, requests for the next plan, outcomes. */
  private onRunMessage(runId: number, a: Active, m: ThreadMessage) {
    if (m.type === 'starts') {
      a.fanOut = new FanOut(m.plans, a.port, (done, total, best) => { void this.writeStartsProgress(runId, done, total, best, a.fanOut!) }, m.deadline)
      if (a.stop) { a.fanOut.stop(); return }
      const idle = Math.max(0, this.o.threads - this.running - this.helping)
      const n = Math.min(idle, m.plans.length - 1)
      for (let i = 0; i < n; i++) this.lendHelper(runId, a, a.fanOut)
    } else if (m.type === 'next') {
      a.fanOut?.next(a.port)
    } else if (m.type === 'outcome') {
      a.fanOut?.outcome(a.port, m.outcome, m.threadId)
    }
  }

  private helping = 0

  /** Lends a thread to a run's multi-start fit (it takes plans until none is left). */
  private lendHelper(runId: number, a: Active, fan: FanOut) {
    const { port1, port2 } = new MessageChannel()
    a.helpers.push(port1)
    fan.helpers++
    this.helping++
    port1.on('message', (m: ThreadMessage) => {
      if (m.type === 'next') fan.next(port1)
      else if (m.type === 'outcome') fan.outcome(port1, m.outcome, m.threadId)
      else if (m.type === 'progress') fan.progress(m.info)
    })
    const task: HelperTask = { runId, databaseUrl: this.o.databaseUrl, deadline: fan.deadline, port: port2, abortFlag: a.flag }
    this.piscina.run(task, { name: 'helper', transferList: [port2], signal: a.hard.signal })
      .then(() => fan.lost(port1, 'ended'), (err) => fan.lost(port1, err instanceof Error ? err.message : String(err)))
      .finally(() => { this.helping--; port1.close() })
  }

  private async writeStartsProgress(runId: number, done: number, total: number, best: number | null, fan: FanOut) {
    await this.o.db.update(runs).set({
      progress: sql`jsonb_build_object('iteration', 0, 'cost', ${best}::float8, 'costHistory', coalesce(${runs.progress}->'costHistory', '[]'::jsonb), 'estimates', coalesce(${runs.progress}->'estimates', '[]'::jsonb), 'fraction', ${Math.min(0.97, done / total)}::float8, 'start', ${done}::int, 'starts', ${total}::int, 'message', ${`${done} of ${total} starts done (${fan.helpers + 1} threads)`}::text, 'updatedAt', ${new Date().toISOString()}::text)`,
    }).where(and(eq(runs.id, runId), eq(runs.status, 'running'))).catch(() => {})
  }

  private async settled(runId: number) {
    try { await this.o.onSettled?.(runId) } catch (err) { this.o.log?.(`run ${runId}: after-run hook failed: ${err instanceof Error ? err.message : err}`) }
  }

  /** Asks a run held here to stop; its thread is terminated when it does not stop within the grace time. */
  requestStop(runId: number, why: 'cancel' | 'timeout') {
    const a = this.active.get(runId)
    if (!a || a.stop) return
    a.stop = why
    const reason = why === 'cancel' ? 'cancelled' : 'time limit exceeded'
    raiseAbortFlag(a.flag)
    a.port.postMessage({ abort: reason })
    for (const h of a.helpers) h.postMessage({ abort: reason })
    a.fanOut?.stop()
    a.timers.push(setTimeout(() => a.hard.abort(), this.o.stopGraceMs ?? 5000))
  }

  /** Heartbeat for the runs held here, and cancellation requested on their rows (by any process). */
  private async tick() {
    if (!this.active.size) return
    try {
      const cancel = await heartbeat(this.o.db, this.workerId, [...this.active.keys()])
      for (const id of cancel) this.requestStop(id, 'cancel')
    } catch (err) {
      this.o.log?.(`heartbeat failed: ${err instanceof Error ? err.message : err}`)
    }
  }

  holds(runId: number) { return this.active.has(runId) }

  async idle() {
    while (this.inFlight.size) await Promise.allSettled([...this.inFlight])
  }

  /**
   * Stops taking work. 'wait' lets running fits finish; 'release' stops their threads at once and hands
   * their runs back to the queue (another worker, or this server's next start, runs them again).
   */
  async close(mode: 'wait' | 'release' = 'wait'): Promise<number[]> {
    this.closed = true
    let released: number[] = []
    if (mode === 'release') {
      this.abandoning = true
      released = await releaseClaims(this.o.db, this.workerId, [...this.active.keys()]).catch(() => [])
      for (const a of this.active.values()) a.hard.abort()
    }
    await this.idle()
    clearInterval(this.beat)
    await this.piscina.destroy()
    return released
  }
}
