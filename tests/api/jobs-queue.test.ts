/**
 * Queue mode: the web process only enqueues (pg-boss in PostgreSQL); separate `npm run worker`
 * processes execute. The executor is tests/helpers/test-executor.ts (synthetic CPU-bound work).
 * Every worker process is bounded in time and killed after each test.
 */
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest'
import { eq } from 'drizzle-orm'
import { makeTestApp, type TestApp } from '../helpers/app'
import { TEST_EXECUTOR, executions, getRun, insertRun, killAllWorkers, runFixture, startWorker, sumOfSquares, waitFor } from '../helpers/jobs'
import { QueueRunner } from '../../server/jobs/queue-runner'
import { sendFit } from '../../server/jobs/boss'
import { runs } from '../../server/db/schema'

let t: TestApp
let fx: Awaited<ReturnType<typeof runFixture>>
const queue = () => t.context.services.jobs as QueueRunner
const url = () => t.context.config.databaseUrl

beforeAll(async () => {
  t = await makeTestApp('jobs_queue', { jobMode: 'queue', runExecutor: TEST_EXECUTOR, jobStaleSeconds: 3, jobMaxAttempts: 3 })
  fx = await runFixture(t.context.db)
})
afterEach(async () => { await killAllWorkers() })
afterAll(async () => {
  await killAllWorkers()
  await t?.close()
})

const progressOf = async (id: number) => ((await getRun(t.context.db, id)).progress as { iteration: number } | null)?.iteration ?? 0

describe('pg-boss queue with worker processes', () => {
  it('the web process only enqueues: nothing runs until a worker starts', async () => {
    expect(queue()).toBeInstanceOf(QueueRunner)
    const id = await insertRun(t.context.db, fx, { steps: 5, stepMs: 10 })
    await queue().enqueue(id)
    await new Promise((r) => setTimeout(r, 1500))
    expect((await getRun(t.context.db, id)).status).toBe('queued')
    const w = await startWorker(url(), 'worker-solo')
    const run = await waitFor('the run to succeed', async () => { const r = await getRun(t.context.db, id); return r.status === 'succeeded' && r })
    expect(run.workerId).toBe('worker-solo')
    expect(run.result).toMatchObject({ sumOfSquares: sumOfSquares(5) })
    await w.kill('SIGTERM')
  })

  it('a worker killed mid-fit: a second worker completes the run', async () => {
    const a = await startWorker(url(), 'worker-a')
    const id = await insertRun(t.context.db, fx, { steps: 60, stepMs: 100 })
    await queue().enqueue(id)
    await waitFor('worker-a to be fitting', async () => (await getRun(t.context.db, id)).workerId === 'worker-a' && (await progressOf(id)) >= 3)
    await a.kill('SIGKILL')
    const killedAt = await progressOf(id)
    expect(killedAt).toBeLessThan(60)
    const b = await startWorker(url(), 'worker-b')
    const run = await waitFor('worker-b to finish the run', async () => { const r = await getRun(t.context.db, id); return r.status === 'succeeded' && r }, 60_000)
    expect(run.workerId).toBe('worker-b')
    expect(run.attempts).toBe(2)
    expect(run.result).toMatchObject({ sumOfSquares: sumOfSquares(60), workerId: 'worker-b' })
    expect(await executions(t.context.db, id)).toEqual(['worker-a', 'worker-b'])
    await b.kill('SIGTERM')
  })

  it('two workers on one queue never run a job twice, even when it is enqueued twice', async () => {
    const ids: number[] = []
    for (let i = 0; i < 6; i++) ids.push(await insertRun(t.context.db, fx, { steps: 5, stepMs: 60 }))
    for (const id of ids) await queue().enqueue(id)
    for (const id of ids.slice(0, 3)) await sendFit(queue().boss, id) // duplicates of three jobs
    const [w1, w2] = await Promise.all([startWorker(url(), 'worker-1'), startWorker(url(), 'worker-2')])
    await waitFor('all six runs to succeed', async () => {
      const rows = await Promise.all(ids.map((id) => getRun(t.context.db, id)))
      return rows.every((r) => r.status === 'succeeded')
    }, 60_000)
    // let the duplicate jobs drain too
    await new Promise((r) => setTimeout(r, 1500))
    const seen = new Set<string>()
    for (const id of ids) {
      const ex = await executions(t.context.db, id)
      expect(ex, `run ${id} executions`).toHaveLength(1)
      seen.add(ex[0])
      expect((await getRun(t.context.db, id)).attempts).toBe(1)
    }
    expect([...seen].every((w) => w === 'worker-1' || w === 'worker-2')).toBe(true)
    await Promise.all([w1.kill('SIGTERM'), w2.kill('SIGTERM')])
  })

  it('cancel asked on the web process reaches the fit running in a worker process', async () => {
    const w = await startWorker(url(), 'worker-c')
    const id = await insertRun(t.context.db, fx, { steps: 300, stepMs: 50 })
    await queue().enqueue(id)
    await waitFor('the fit to run', async () => (await progressOf(id)) >= 2)
    await queue().cancel(id)
    const run = await waitFor('cancelled', async () => { const r = await getRun(t.context.db, id); return r.status === 'cancelled' && r }, 15_000)
    expect((run.progress as { iteration: number }).iteration).toBeLessThan(300)
    expect(run.workerId).toBe('worker-c')
    // the row says cancelled as soon as the fit stops; the worker logs the run's end just after
    await waitFor('the worker to log the run', async () => w.output().includes(`run ${id}: executed`) || null, 15_000)
    await w.kill('SIGTERM')
  })

  it('SIGTERM hands the held run back to the queue at once; after too many lost workers the run fails with the reason', async () => {
    const id = await insertRun(t.context.db, fx, { steps: 400, stepMs: 50 })
    await queue().enqueue(id)
    const w1 = await startWorker(url(), 'worker-t1')
    await waitFor('worker-t1 fitting', async () => (await getRun(t.context.db, id)).workerId === 'worker-t1' && (await progressOf(id)) >= 1)
    await w1.kill('SIGTERM')
    const released = await getRun(t.context.db, id)
    expect(released.status).toBe('queued')
    expect(released.workerId).toBeNull()
    // two more workers are killed outright while holding it (attempts 2 and 3 of 3)
    for (const name of ['worker-t2', 'worker-t3']) {
      const w = await startWorker(url(), name)
      await waitFor(`${name} fitting`, async () => (await getRun(t.context.db, id)).workerId === name && (await executions(t.context.db, id)).includes(name), 40_000)
      await w.kill('SIGKILL')
    }
    const run = await waitFor('failed', async () => { const r = await getRun(t.context.db, id); return r.status === 'failed' && r }, 30_000)
    expect(run.attempts).toBe(3)
    expect(run.error).toMatch(/stopped responding.*worker-t3.*3 attempt/)
    expect(await executions(t.context.db, id)).toEqual(['worker-t1', 'worker-t2', 'worker-t3'])
    await t.context.db.update(runs).set({ cancelRequested: false }).where(eq(runs.id, id))
  })
})
