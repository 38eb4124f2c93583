/**
 * The cost landscape of a finished run is computed in a worker thread, never on the web server's event
 * loop: /api/health keeps answering while a 41 × 41 grid is computed, the grid is cached on the run row
 * (a second identical request is served from it), and a process without a job pool (queue mode) uses a
 * one-thread local pool. Data: seeded synthetic traces of the heated buffer vessel template (invented
 * constants, server/services/demo-project.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { eq } from 'drizzle-orm'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { bufferVesselCsv } from '../../server/services/demo-project'
import { closeLocalLandscapePool, LANDSCAPE_CACHE_FIELD, LANDSCAPE_CACHE_MAX, LANDSCAPE_ORDER_FIELD, LANDSCAPE_PER_USER, landscapeKey, runLandscape } from '../../server/services/landscape'
import type { ThreadRunner } from '../../server/jobs/thread-runner'
import { waitFor } from '../helpers/jobs'
import { computeLandscape } from '../../server/services/fit-execution'
import { HttpError } from '../../server/errors'
import { runs } from '../../server/db/schema'
import { bufferTemplate, newProject, upload, waitForRun, WS } from './runs-helpers'

let t: TestApp
let modeler: Agent
let runId: number

const rowOf = async (id: number) => (await t.context.db.select().from(runs).where(eq(runs.id, id)))[0]

beforeAll(async () => {
  t = await makeTestApp('landscape')
  modeler = await signedIn(t.app, demo.modeler)
  const tv = await bufferTemplate(t)
  const pid = await newProject(modeler, 'Landscape test')
  const est = await upload(modeler, pid, bufferVesselCsv(tv.text, { seed: 21, label: 'landscape estimation' }), 'est.csv', { purpose: 'estimation' })
  expect(est.status).toBe(201)
  const b = await modeler.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: est.body.id })
  expect(b.status).toBe(201)
  const r = await modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
    .send({ modelId: tv.modelId, version: tv.number, bindingId: b.body.id, estimation: [est.body.id], weighting: 'ml', seed: 3, name: 'landscape source' })
  expect(r.status).toBe(201)
  const run = await waitForRun(modeler, r.body.id)
  expect(run.status).toBe('succeeded')
  runId = run.id
}, 180_000)
afterAll(async () => {
  await closeLocalLandscapePool()
  await t.close()
})

describe('landscape off the event loop', () => {
  it('keeps /api/health answering while a 41 × 41 landscape is computed, then serves it from the cache', async () => {
    // a small grid first, so the thread is loaded and the big request below measures computation only
    const small = await modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=tau&n=5`)
    expect(small.status).toBe(200)
    expect(small.headers['x-pewter-landscape']).toBe('computed')

    let pending = true
    const started = Date.now()
    const big = modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=tau&n=41`).then((r) => { pending = false; return r })
    // health answers counted only while the grid is still pending: each came back before the grid did
    let answeredWhilePending = 0
    while (pending) {
      const h = await request(t.app).get('/api/health')
      expect(h.status).toBe(200)
      if (pending) answeredWhilePending++
      await new Promise((r) => setTimeout(r, 50))
    }
    const first = await big
    const computeMs = Date.now() - started
    expect(first.status).toBe(200)
    expect(first.headers['x-pewter-landscape']).toBe('computed')
    expect(first.body.cost).toHaveLength(41)
    expect(first.body.cost[0]).toHaveLength(41)
    // health was asked several times while the grid was being computed, and never waited for it
    expect(answeredWhilePending, `landscape took ${computeMs} ms`).toBeGreaterThanOrEqual(3)

    const second = await modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=tau&n=41`)
    expect(second.status).toBe(200)
    expect(second.headers['x-pewter-landscape']).toBe('cached')
    expect(second.body).toEqual(first.body)
    const row = await rowOf(runId)
    const cache = (row.result as Record<string, any>)[LANDSCAPE_CACHE_FIELD]
    expect(Object.keys(cache).sort()).toEqual([landscapeKey('UA', 'tau', 41), landscapeKey('UA', 'tau', 5)].sort())

    // the cache is internal: the run and its JSON export do not show it, and the fit result is intact
    const shown = await modeler.get(`${WS}/runs/${runId}`)
    expect(shown.body.result[LANDSCAPE_CACHE_FIELD]).toBeUndefined()
    expect(shown.body.result.parameters.length).toBeGreaterThanOrEqual(2)
    const exported = await modeler.get(`${WS}/runs/${runId}/export?format=json`)
    expect(exported.body.result[LANDSCAPE_CACHE_FIELD]).toBeUndefined()
  }, 120_000)

  it('rejects an unknown quantity with 400 and caches nothing for it', async () => {
    const bad = await modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=nope&n=5`)
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(/nope|estimated/)
    const cache = ((await rowOf(runId)).result as Record<string, any>)[LANDSCAPE_CACHE_FIELD]
    expect(cache[landscapeKey('UA', 'nope', 5)]).toBeUndefined()
  })

  it('without a job pool (queue mode) computes on a local thread, equal to the in-process computation', async () => {
    const noPool = { ...t.context, services: {} }
    const row = await rowOf(runId)
    const answer = await runLandscape(noPool, row, 'tau', 'UA', 6, 0)
    expect(answer.on).toBe('local-thread')
    expect(answer.cached).toBe(false)
    const direct = await computeLandscape(t.context.db, row, 'tau', 'UA', 6)
    expect(answer.landscape).toEqual(direct)
  }, 60_000)

  it('stops a landscape that exceeds its time limit with a clear 503', async () => {
    const noPool = { ...t.context, services: {} }
    const row = await rowOf(runId)
    const err = await runLandscape(noPool, row, 'UA', 'tau', 9, 0, 1).then(() => null, (e: unknown) => e)
    expect(err).toBeInstanceOf(HttpError)
    expect((err as HttpError).status).toBe(503)
    expect((err as HttpError).message).toMatch(/exceeded the time limit of 1 ms .*was stopped/)
    const cache = ((await rowOf(runId)).result as Record<string, any>)[LANDSCAPE_CACHE_FIELD]
    expect(cache[landscapeKey('UA', 'tau', 9)]).toBeUndefined()
  }, 60_000)

  it(`a user gets 429 past ${LANDSCAPE_PER_USER} landscapes computing at once; another user is not held back`, async () => {
    const viewer = await signedIn(t.app, demo.viewer)
    const grids = [7, 8, 9, 10].map((n) => viewer.get(`${WS}/runs/${runId}/landscape?a=tau&b=UA&n=${n}`).then((r) => r))
    const answers = await Promise.all(grids)
    const limited = answers.filter((r) => r.status === 429)
    expect(limited.length).toBe(4 - LANDSCAPE_PER_USER)
    expect(limited[0].body.error.message).toContain(`at most ${LANDSCAPE_PER_USER} at once per user`)
    expect(answers.filter((r) => r.status === 200).length).toBe(LANDSCAPE_PER_USER)
    const other = await modeler.get(`${WS}/runs/${runId}/landscape?a=tau&b=UA&n=11`)
    expect(other.status).toBe(200)
  }, 120_000)

  it(`keeps the ${LANDSCAPE_CACHE_MAX} most recently used grids (least recently used out)`, async () => {
    const grid = (n: number) => modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=tau&n=${n}`)
    // touch the n = 5 grid cached by the first test, then fill the cache past its size with small grids
    expect((await grid(5)).headers['x-pewter-landscape']).toBe('cached')
    for (let n = 6; n < 6 + LANDSCAPE_CACHE_MAX - 1; n++) {
      expect((await grid(n)).status).toBe(200)
      if (n === 6) expect((await grid(5)).headers['x-pewter-landscape']).toBe('cached') // 5 stays recent
    }
    const result = (await rowOf(runId)).result as Record<string, any>
    const keys = Object.keys(result[LANDSCAPE_CACHE_FIELD])
    expect(keys).toHaveLength(LANDSCAPE_CACHE_MAX)
    expect(result[LANDSCAPE_ORDER_FIELD]).toHaveLength(LANDSCAPE_CACHE_MAX)
    expect(keys).toContain(landscapeKey('UA', 'tau', 5))
    // the grid least recently used (the 41 × 41 of the first test) was dropped, and is computed again
    expect(keys).not.toContain(landscapeKey('UA', 'tau', 41))
    const again = await modeler.get(`${WS}/runs/${runId}/landscape?a=UA&b=tau&n=41`)
    expect(again.headers['x-pewter-landscape']).toBe('computed')
    const shown = await modeler.get(`${WS}/runs/${runId}`)
    expect(shown.body.result[LANDSCAPE_ORDER_FIELD]).toBeUndefined()
  }, 240_000)

  it('a fit waiting for a thread goes before a landscape waiting for one', async () => {
    const pool = (t.context.services.jobs as ThreadRunner).pool
    const order: string[] = []
    // occupy every thread with landscapes, then queue one more landscape and one fit
    const busy = Array.from({ length: pool.size }, (_, i) => pool.runHelperTask('ping', null).then(() => order.push(`busy${i}`)))
    await waitFor('every thread taken', async () => pool.busy >= pool.size)
    const late = pool.runHelperTask('ping', null).then(() => order.push('landscape'))
    const fit = pool.execute(999_999).then(() => order.push('fit')) // no such run: it takes a slot, claims nothing
    await Promise.all([...busy, late, fit])
    expect(order.indexOf('fit')).toBeLessThan(order.indexOf('landscape'))
  }, 120_000)
})
