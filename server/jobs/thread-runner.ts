/**
 * Embedded default: fits run in a pool of worker threads inside the web process, so the event loop
 * keeps answering requests. At start it picks up runs a previous process left queued or abandoned.
 */
import type { Db } from '../db/client'
import type { JobRunner } from './types'
import { RunPool, type RunPoolOptions } from './pool'
import { reapPeriodMs, reapStale, requestCancel, waitingRuns } from './claims'

export class ThreadRunner implements JobRunner {
  readonly pool: RunPool
  private reaper: NodeJS.Timeout | null = null

  constructor(private db: Db, options: RunPoolOptions & { maxAttempts: number }) {
    this.pool = new RunPool(options)
    this.staleSeconds = options.staleSeconds
    this.maxAttempts = options.maxAttempts
    this.warm = options.warm ?? false
  }
  private warm: boolean
  private staleSeconds: number
  private maxAttempts: number

  /** Re-enqueues waiting and abandoned runs now and, periodically, abandoned ones. */
  async start() {
    if (this.warm) void this.pool.warmUp().catch(() => {})
    await this.recover()
    this.reaper = setInterval(() => { void this.recover().catch(() => {}) }, reapPeriodMs(this.staleSeconds))
    this.reaper.unref()
  }

  private async recover() {
    await reapStale(this.db, this.staleSeconds, this.maxAttempts)
    for (const id of await waitingRuns(this.db)) void this.pool.execute(id)
  }

  async enqueue(runId: number) {
    void this.pool.execute(runId)
  }

  async cancel(runId: number) {
    await requestCancel(this.db, runId)
    this.pool.requestStop(runId, 'cancel')
  }

  idle() { return this.pool.idle() }

  async close() {
    if (this.reaper) clearInterval(this.reaper)
    await this.pool.close('release')
  }
}
