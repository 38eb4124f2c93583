/**
 * Queue mode (PEWTER_JOBS=queue): the web process only enqueues runs in PostgreSQL through pg-boss;
 * `npm run worker` processes, on this or any machine pointed at the same database, execute them.
 * Cancellation travels through the run row (its cancel flag), which the holding worker polls.
 */
import type PgBoss from 'pg-boss'
import type { Db } from '../db/client'
import type { JobRunner } from './types'
import { reapPeriodMs, reapStale, requestCancel } from './claims'
import { sendFit, startBoss } from './boss'

/** Reaps abandoned runs (claims.ts reapStale) and puts the ones with attempts left back on the queue. */
export async function requeueStale(db: Db, boss: PgBoss, staleSeconds: number, maxAttempts: number, log?: (m: string) => void) {
  const { requeued, failed } = await reapStale(db, staleSeconds, maxAttempts)
  for (const id of requeued) { log?.(`run ${id}: its worker stopped responding; queued again`); await sendFit(boss, id) }
  for (const id of failed) log?.(`run ${id}: its worker stopped responding; marked failed`)
}

export class QueueRunner implements JobRunner {
  private reaper: NodeJS.Timeout | null = null
  private constructor(private db: Db, readonly boss: PgBoss, private staleSeconds: number, private maxAttempts: number) {}

  static async start(db: Db, o: { databaseUrl: string; timeoutSeconds: number; staleSeconds: number; maxAttempts: number }) {
    const boss = await startBoss(o.databaseUrl, { timeoutSeconds: o.timeoutSeconds })
    const runner = new QueueRunner(db, boss, o.staleSeconds, o.maxAttempts)
    runner.reaper = setInterval(() => { void runner.reap().catch(() => {}) }, reapPeriodMs(o.staleSeconds))
    runner.reaper.unref()
    return runner
  }

  /** Runs whose worker died go back on the queue (or fail after too many attempts). */
  async reap() {
    await requeueStale(this.db, this.boss, this.staleSeconds, this.maxAttempts)
  }

  async enqueue(runId: number) {
    await sendFit(this.boss, runId)
  }

  async cancel(runId: number) {
    await requestCancel(this.db, runId)
  }

  async close() {
    if (this.reaper) clearInterval(this.reaper)
    await this.boss.stop({ graceful: false, wait: true })
  }
}
