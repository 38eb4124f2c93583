/**
 * The embedded job runner: fits run in worker threads of the web process (piscina), never on its
 * event loop. The executor is tests/helpers/test-executor.ts (a CPU-bound stand-in for executeRun,
 * synthetic work with a closed-form result).
 */
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { makeTestApp, type TestApp } from '../helpers/app'
import { TEST_EXECUTOR, executions, getRun, insertRun, runFixture, sumOfSquares, waitFor } from '../helpers/jobs'
import { ThreadRunner } from '../../server/jobs/thread-runner'
import { createJobRunner } from '../../server/jobs'
import type { JobRunner } from '../../server/jobs/types'
import { runs } from '../../server/db/schema'
import { eq, sql } from 'drizzle-orm'

let t: TestApp
let fx: Awaited<ReturnType<typeof runFixture>>
const jobs = () => t.context.services.jobs as JobRunner

beforeAll(async () => {
  t = await makeTestApp('jobs_threads', { runExecutor: TEST_EXECUTOR, workerThreads: 2 })
  fx = await runFixture(t.context.db)
})
afterAll(async () => { await t?.close() })

describe('embedded worker-thread pool', () => {
  it('is the default runner and completes a run, persisting progress and the result', async () => {
    expect(jobs()).toBeInstanceOf(ThreadRunner)
    const id = await insertRun(t.context.db, fx, { steps: 12, stepMs: 20 })
    await jobs().enqueue(id)
    const run = await waitFor('the run to succeed', async () => { const r = await getRun(t.context.db, id); return r.status === 'succeeded' && r })
    expect(run.result).toMatchObject({ sumOfSquares: sumOfSquares(12) })
    expect(run.progress).toEqual({ iteration: 12, of: 12 })
    expect(run.attempts).toBe(1)
    expect(run.workerId).toBe((jobs() as ThreadRunner).pool.workerId)
    expect(await executions(t.context.db, id)).toHaveLength(1)
  })

  it('keeps /api/health answering while two CPU-bound fits run', async () => {
    const a = await insertRun(t.context.db, fx, { steps: 400, stepMs: 100 })
    const b = await insertRun(t.context.db, fx, { steps: 400, stepMs: 100 })
    await jobs().enqueue(a)
    await jobs().enqueue(b)
    const bothRunning = async () => {
      const rows = await t.context.db.select({ status: runs.status, progress: runs.progress }).from(runs).where(sql`${runs.id} in (${a}, ${b})`)
      return rows.length === 2 && rows.every((r) => r.status === 'running' && (r.progress as { iteration: number } | null)?.iteration)
    }
    try {
      await waitFor('both fits to be running', bothRunning, 30_000)
      let answered = 0
      for (let i = 0; i < 10; i++) {
        const h = await request(t.app).get('/api/health')
        expect(h.status).toBe(200)
        answered++
      }
      // had the fits run on the event loop, no request could have been answered before they ended
      expect(await bothRunning()).toBe(true)
      expect(answered).toBe(10)
    } finally {
      // stopped even when a check failed, so the next test finds both threads free
      await jobs().cancel(a)
      await jobs().cancel(b)
      await waitFor('both to stop', async () => (await getRun(t.context.db, a)).status === 'cancelled' && (await getRun(t.context.db, b)).status === 'cancelled')
    }
  })

  it('cancels a running fit through its row and the thread stops early', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 200, stepMs: 50 })
    await jobs().enqueue(id)
    await waitFor('progress', async () => (((await getRun(t.context.db, id)).progress as { iteration: number } | null)?.iteration ?? 0) >= 2)
    await jobs().cancel(id)
    const run = await waitFor('cancelled', async () => { const r = await getRun(t.context.db, id); return r.status === 'cancelled' && r }, 10_000)
    expect((run.progress as { iteration: number }).iteration).toBeLessThan(200)
    expect(run.finishedAt).not.toBeNull()
  })

  it('a cancel reaches a fit inside a long synchronous computation (shared abort flag), so it stops itself instead of being terminated', async () => {
    // one step of 60 s of synchronous CPU work: an abort sent as a message could only arrive after it;
    // the signal's shared-memory flag is read inside the loop, so the executor itself records the cancel
    const id = await insertRun(t.context.db, fx, { steps: 1, stepMs: 60_000, checkSignalInStep: true })
    await jobs().enqueue(id)
    await waitFor('the fit to start', async () => (await executions(t.context.db, id)).length === 1)
    await jobs().cancel(id)
    const run = await waitFor('cancelled', async () => { const r = await getRun(t.context.db, id); return r.status === 'cancelled' && r }, 30_000)
    // 'Cancelled.' is written by the executor; a terminated thread would leave 'Cancelled; the fit was stopped.'
    expect(run.error).toBe('Cancelled.')
  })

  it('marks a run failed with the error the executor raised', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 10, stepMs: 5, failAt: 3 })
    await jobs().enqueue(id)
    const run = await waitFor('failed', async () => { const r = await getRun(t.context.db, id); return r.status === 'failed' && r })
    expect(run.error).toMatch(/synthetic failure at step 3/)
  })

  it('a run cancelled before a thread reaches it never starts', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 5, stepMs: 5 })
    await t.context.db.update(runs).set({ cancelRequested: true }).where(eq(runs.id, id))
    await jobs().enqueue(id)
    await waitFor('cancelled', async () => (await getRun(t.context.db, id)).status === 'cancelled')
    expect(await executions(t.context.db, id)).toHaveLength(0)
  })
})

describe('time limit and recovery', () => {
  // each test's own runner beside the app's, closed after it whatever the order, so none is left polling
  let runner: JobRunner | null = null
  afterEach(async () => {
    await runner?.close()
    runner = null
  })

  it('stops a fit that exceeds the time limit (terminating a thread that ignores cancellation) and says why', async () => {
    runner = await createJobRunner({ ...t.context, config: { ...t.context.config, jobTimeoutSeconds: 1 } }, { executor: TEST_EXECUTOR, stopGraceMs: 300 })
    const id = await insertRun(t.context.db, fx, { steps: 1000, stepMs: 50, ignoreCancel: true })
    await runner.enqueue(id)
    const run = await waitFor('failed on the time limit', async () => { const r = await getRun(t.context.db, id); return r.status === 'failed' && r }, 15_000)
    expect(run.error).toMatch(/time limit of 1 s/)
    // the thread was terminated: the run row no longer changes
    const before = (await getRun(t.context.db, id)).progress
    await new Promise((r) => setTimeout(r, 600))
    expect((await getRun(t.context.db, id)).progress).toEqual(before)
    expect((await getRun(t.context.db, id)).status).toBe('failed')
  })

  it('picks up, at start, a run whose previous worker died (stale heartbeat) and completes it as a second attempt', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 6, stepMs: 5 })
    await t.context.db.update(runs).set({ status: 'running', workerId: 'pool@gone:1:dead', attempts: 1, heartbeatAt: sql`now() - interval '10 minutes'` }).where(eq(runs.id, id))
    runner = await createJobRunner(t.context, { executor: TEST_EXECUTOR })
    const run = await waitFor('succeeded', async () => { const r = await getRun(t.context.db, id); return r.status === 'succeeded' && r })
    expect(run.attempts).toBe(2)
    expect(run.result).toMatchObject({ sumOfSquares: sumOfSquares(6) })
  })

  it('fails, with the reason, a run whose workers died too often', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 6, stepMs: 5 })
    await t.context.db.update(runs).set({ status: 'running', workerId: 'pool@gone:1:dead', attempts: t.context.config.jobMaxAttempts, heartbeatAt: sql`now() - interval '10 minutes'` }).where(eq(runs.id, id))
    runner = await createJobRunner(t.context, { executor: TEST_EXECUTOR })
    const run = await waitFor('failed', async () => { const r = await getRun(t.context.db, id); return r.status === 'failed' && r })
    expect(run.error).toMatch(/stopped responding.*pool@gone:1:dead.*3 attempt/)
    expect(await executions(t.context.db, id)).toHaveLength(0)
  })
})
