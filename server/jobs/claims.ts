/**
 * The run row is the source of truth shared by every process: a worker claims a run by writing its id
 * and a heartbeat, keeps the heartbeat fresh while it runs, and a run whose heartbeat has gone stale
 * (its worker was killed) is handed back to the queue or, after too many attempts, marked failed with
 * the reason. Claims are single UPDATE … WHERE statements, so two workers never both win one run.
 */
import { and, eq, inArray, isNotNull, isNull, lt, or, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { runs } from '../db/schema'

const ACTIVE = ['queued', 'running']

export type ClaimResult = { claimed: true; attempt: number } | { claimed: false; reason: 'not-found' | 'finished' | 'taken' | 'cancelled' }

/**
 * Claims a run for `workerId`: free (no worker) or abandoned (stale heartbeat), and not finished.
 * A run cancelled before any worker reached it is marked cancelled here.
 */
export async function claimRun(db: Db, runId: number, workerId: string, staleSeconds: number): Promise<ClaimResult> {
  const stale = sql`now() - make_interval(secs => ${staleSeconds})`
  const unheld = and(eq(runs.id, runId), inArray(runs.status, ACTIVE),
    or(isNull(runs.workerId), isNull(runs.heartbeatAt), lt(runs.heartbeatAt, stale)))
  const won = await db.update(runs)
    .set({ workerId, heartbeatAt: sql`now()`, attempts: sql`${runs.attempts} + 1` })
    .where(and(unheld, eq(runs.cancelRequested, false)))
    .returning({ attempts: runs.attempts })
  if (won.length) return { claimed: true, attempt: won[0].attempts }
  const cancelled = await db.update(runs)
    .set({ status: 'cancelled', finishedAt: sql`now()`, error: 'Cancelled before it started.' })
    .where(and(unheld, eq(runs.cancelRequested, true)))
    .returning({ id: runs.id })
  if (cancelled.length) return { claimed: false, reason: 'cancelled' }
  const [row] = await db.select({ status: runs.status }).from(runs).where(eq(runs.id, runId))
  if (!row) return { claimed: false, reason: 'not-found' }
  return { claimed: false, reason: ACTIVE.includes(row.status) ? 'taken' : 'finished' }
}

/** Refreshes the heartbeat of the runs this worker holds; returns those whose cancellation was asked. */
export async function heartbeat(db: Db, workerId: string, runIds: number[]): Promise<number[]> {
  if (!runIds.length) return []
  const rows = await db.update(runs)
    .set({ heartbeatAt: sql`now()` })
    .where(and(eq(runs.workerId, workerId), inArray(runs.id, runIds)))
    .returning({ id: runs.id, cancel: runs.cancelRequested })
  return rows.filter((r) => r.cancel).map((r) => r.id)
}

/** Makes sure a run this worker held ends in a terminal state (the executor may have died). */
export async function settleRun(db: Db, runId: number, workerId: string, status: 'failed' | 'cancelled', error: string) {
  await db.update(runs)
    .set({ status, error, finishedAt: sql`now()` })
    .where(and(eq(runs.id, runId), eq(runs.workerId, workerId), inArray(runs.status, ACTIVE)))
}

/** Forces a terminal state after a hard stop (timeout or cancel the executor did not honour). */
export async function forceStatus(db: Db, runId: number, workerId: string, status: 'failed' | 'cancelled', error: string) {
  await db.update(runs)
    .set({ status, error, finishedAt: sql`now()` })
    .where(and(eq(runs.id, runId), eq(runs.workerId, workerId)))
}

export async function runStatus(db: Db, runId: number) {
  const [row] = await db.select({ status: runs.status, error: runs.error, createdBy: runs.createdBy }).from(runs).where(eq(runs.id, runId))
  return row ?? null
}

/** How often to look for abandoned runs: twice per stale period, at most once a second. */
export const reapPeriodMs = (staleSeconds: number) => Math.max(1000, staleSeconds * 500)

/**
 * Abandoned runs (worker gone: heartbeat older than `staleSeconds`): back to the queue when attempts
 * remain (returned so the caller re-enqueues them), else failed with the reason.
 */
export async function reapStale(db: Db, staleSeconds: number, maxAttempts: number): Promise<{ requeued: number[]; failed: number[] }> {
  const stale = sql`now() - make_interval(secs => ${staleSeconds})`
  const abandoned = and(inArray(runs.status, ACTIVE), isNotNull(runs.workerId), lt(runs.heartbeatAt, stale))
  const failed = await db.update(runs)
    .set({
      status: 'failed',
      finishedAt: sql`now()`,
      error: sql`'The worker running this fit stopped responding (last heartbeat ' || to_char(${runs.heartbeatAt} at time zone 'UTC', 'YYYY-MM-DD HH24:MI:SS') || ' UTC, worker ' || ${runs.workerId} || ') after ' || ${runs.attempts} || ' attempt(s); it was not retried again.'`,
    })
    .where(and(abandoned, sql`${runs.attempts} >= ${maxAttempts}`))
    .returning({ id: runs.id })
  const cancelled = await db.update(runs)
    .set({ status: 'cancelled', finishedAt: sql`now()`, error: 'Cancelled; the worker running it stopped responding.' })
    .where(and(abandoned, eq(runs.cancelRequested, true)))
    .returning({ id: runs.id })
  const requeued = await db.update(runs)
    .set({ status: 'queued', workerId: null, heartbeatAt: null })
    .where(and(abandoned, sql`${runs.attempts} < ${maxAttempts}`))
    .returning({ id: runs.id })
  return { requeued: requeued.map((r) => r.id), failed: [...failed, ...cancelled].map((r) => r.id) }
}

/** Runs waiting for a worker (queued with no live claim): re-enqueued when an embedded pool starts. */
export async function waitingRuns(db: Db): Promise<number[]> {
  const rows = await db.select({ id: runs.id }).from(runs)
    .where(and(eq(runs.status, 'queued'), isNull(runs.workerId)))
    .orderBy(runs.id)
  return rows.map((r) => r.id)
}

/** Hands the runs a stopping worker holds back to the queue at once (no waiting for staleness). */
export async function releaseClaims(db: Db, workerId: string, runIds: number[]): Promise<number[]> {
  if (!runIds.length) return []
  const rows = await db.update(runs)
    .set({ status: 'queued', workerId: null, heartbeatAt: null })
    .where(and(eq(runs.workerId, workerId), inArray(runs.id, runIds), inArray(runs.status, ACTIVE)))
    .returning({ id: runs.id })
  return rows.map((r) => r.id)
}

export async function requestCancel(db: Db, runId: number) {
  await db.update(runs).set({ cancelRequested: true }).where(and(eq(runs.id, runId), inArray(runs.status, ACTIVE)))
}
