/**
 * Multi-start fits fan out over the worker threads: the run's starts are shared between the run's
 * thread and idle helper threads, and the result equals the sequential fit of the same settings
 * (seeded synthetic demo data of the invented Tinmoor Works plant).
 */
import { seededDemoProject } from '../helpers/demo-project'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type TestApp } from '../helpers/app'
import { getRun, waitFor } from '../helpers/jobs'
import { runs } from '../../server/db/schema'
import { executeRun } from '../../server/services/fit-execution'
import { ThreadRunner } from '../../server/jobs/thread-runner'
import { createJobRunner } from '../../server/jobs'
import type { JobRunner } from '../../server/jobs/types'

let t: TestApp
let runner: ThreadRunner
beforeAll(async () => {
  t = await makeTestApp('jobs_fanout', { workerThreads: 3, smtpUrl: 'smtp://127.0.0.1:9' })
  // a server's pool (threads booted at start), in place of the test default
  await (t.context.services.jobs as JobRunner).close()
  runner = (await createJobRunner(t.context, { warm: true })) as ThreadRunner
  t.context.services.jobs = runner
  expect(await runner.pool.warmUp()).toHaveLength(3)
})
afterAll(async () => { await runner?.close(); await t?.close() })

type Result = { parameters: { name: string; value: number }[]; starts: { sse: number | null; status: string }[]; bestStart: number }

describe('multi-start fan-out', () => {
  it('spreads the starts over several threads and gives the sequential result', async () => {
    const { project, run: seeded, estimation: est } = await seededDemoProject(t.context.db)
    const agent = await signedIn(t.app, demo.modeler)
    const body = { modelId: seeded.modelId, version: seeded.modelVersion, estimation: [est.id], starts: 4, weighting: 'ml', seed: 11 }
    const created = await agent.post(`/api/workspaces/tinmoor/projects/${project.id}/runs`).set(CSRF).send(body)
    expect(created.status).toBe(201)
    const id = created.body.id as number
    // while the starts are spread, the run row carries a live cost curve and the current estimates
    // (the helpers' iterations reach the run's thread, which writes them)
    let liveCurve = 0
    let liveEstimates = 0
    const run = await waitFor('the multi-start run', async () => {
      const r = await getRun(t.context.db, id)
      const p = r.progress as { costHistory?: number[]; estimates?: unknown[] } | null
      if (r.status === 'running' && p) {
        liveCurve = Math.max(liveCurve, p.costHistory?.length ?? 0)
        liveEstimates = Math.max(liveEstimates, p.estimates?.length ?? 0)
      }
      return ['succeeded', 'failed', 'cancelled'].includes(r.status) && r
    }, 150_000)
    expect(liveCurve).toBeGreaterThan(1)
    expect(liveEstimates).toBeGreaterThan(0)
    expect(run.error ?? null).toBeNull()
    expect(run.status).toBe('succeeded')
    const pool = runner.pool
    const spread = pool.fanOuts.get(id)
    expect(spread?.plans).toBe(4)
    expect(spread!.threadIds.length).toBeGreaterThanOrEqual(2)

    // the same settings fitted sequentially in this process
    const [copy] = await t.context.db.insert(runs).values({
      workspaceId: run.workspaceId, projectId: run.projectId, modelId: run.modelId, modelVersion: run.modelVersion,
      settings: run.settings, provenance: run.provenance, createdBy: run.createdBy, workerId: 'sequential', heartbeatAt: new Date(),
    }).returning()
    expect(await executeRun(t.context.db, copy.id, { workerId: 'sequential' })).toBe('succeeded')
    const a = run.result as Result
    const b = (await getRun(t.context.db, copy.id)).result as Result
    expect(a.starts).toHaveLength(4)
    expect(a.bestStart).toBe(b.bestStart)
    a.starts.forEach((s, i) => {
      expect(s.status).toBe(b.starts[i].status)
      if (b.starts[i].sse !== null) expect(s.sse! / b.starts[i].sse!).toBeCloseTo(1, 9)
    })
    expect(b.starts.filter((s) => s.sse !== null).length).toBeGreaterThan(1)
    for (const p of b.parameters) expect(a.parameters.find((q) => q.name === p.name)!.value / p.value).toBeCloseTo(1, 9)
  }, 200_000)
})
