/**
 * Requests that used to freeze the event loop: each is answered with a 4xx whose message names the limit,
 * and /api/health answers (200, within the 2 s the service promises) while the work is in flight on the
 * request pool's thread. For the requests that keep a thread busy, health is asked once the thread has
 * started and must complete before the hostile request returns (event order, no timing threshold).
 * All data here are invented for the test.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { newProject, upload, WS } from './runs-helpers'
import type { RequestPool } from '../../server/jobs/request-pool'
import { MAX_GENERATED_CHARS } from '../../shared/sheet/emitter'
import { MAX_COLUMNS } from '../../shared/data/csv'
import { MAX_EXCLUDE_WINDOWS } from '../../shared/api/datasets'
import { MAX_FILTER_WORK } from '../../server/services/conditioning'
import { waitFor } from '../helpers/jobs'

let t: TestApp
let modeler: Agent
let pid: number
let datasetId: number
const pool = () => t.context.services.requests as RequestPool

beforeAll(async () => {
  t = await makeTestApp('hostile_requests', { uploadLimitBytes: 8 * 1024 * 1024 })
  modeler = await signedIn(t.app, demo.modeler)
  pid = await newProject(modeler, 'Hostile requests (synthetic)')
  // 1 000 rows of an invented trace
  const rows = Array.from({ length: 1000 }, (_, k) => `${k},${Math.sin(k / 10).toFixed(4)},${(k % 7) / 7}`)
  const r = await upload(modeler, pid, ['t [s],level [m],valve', ...rows].join('\n'), 'thousand.csv')
  expect(r.status).toBe(201)
  datasetId = r.body.id
})
afterAll(async () => { await t?.close() })

interface Outcome { status: number; body: { error?: { message: string } } }

/**
 * Sends the hostile request, then (once `busy()` says its work is running, when given) a health request;
 * returns both answers and whether health came back first.
 */
async function whileInFlight(hostile: () => PromiseLike<Outcome>, busy?: () => boolean) {
  let hostileDone = false
  const h = Promise.resolve(hostile()).then((r) => { hostileDone = true; return r })
  if (busy) await waitFor('the hostile request to be at work', async () => busy() || hostileDone, 60_000)
  const health = await request(t.app).get('/api/health')
  // the event that matters: health answered while the hostile request was still at work
  const healthFirst = !hostileDone
  const r = await h
  expect(health.status).toBe(200)
  return { r, healthFirst }
}

const threadBusy = () => pool().running > 0

describe('hostile requests', () => {
  it('a sheet whose generated code is too large: the run is refused with the limit, compiled off the event loop', async () => {
    // 40 states, each right side a 60-deep chain of powers: every line passes the depth check
    const lines = Array.from({ length: 40 }, (_, i) => `state x${i} = 1 [1]\nx${i}' = k*(${Array(60).fill(`x${i}`).join('^')})`)
    const text = `param k = 1 [1/s] in [0, 2]\n${lines.join('\n')}\noutput y = x1`
    const m = await modeler.post(`${WS}/models`).set(CSRF).send({ title: 'Hostile power chains (synthetic)', text })
    expect(m.status, JSON.stringify(m.body)).toBe(201)
    const { r, healthFirst } = await whileInFlight(() => modeler.post(`${WS}/projects/${pid}/runs`).set(CSRF)
      .send({ modelId: m.body.id, version: 1, estimation: [datasetId] }), threadBusy)
    expect(r.status).toBe(400)
    expect(r.body.error!.message).toContain(`more than ${MAX_GENERATED_CHARS} characters`)
    expect(healthFirst).toBe(true)
  })

  it(`a CSV with more than ${MAX_COLUMNS} columns is refused naming the limit`, async () => {
    const n = 200_000
    const header = ['t', ...Array.from({ length: n }, (_, i) => `c${i}`)].join(',')
    const row = ['0', ...Array(n).fill('1')].join(',')
    const { r } = await whileInFlight(() => upload(modeler, pid, `${header}\n${row}\n`, 'wide.csv'))
    expect(r.status).toBe(400)
    expect(r.body.error!.message).toMatch(new RegExp(`too many columns: the header has ${n + 1}, the limit is ${MAX_COLUMNS} columns`))
  })

  it(`more than ${MAX_EXCLUDE_WINDOWS} exclusion windows are refused naming the limit`, async () => {
    // serialised before the clock starts: this process is also the client
    const body = JSON.stringify({ steps: [{ op: 'exclude', windows: Array.from({ length: 100_000 }, (_, i) => [i, i + 0.5]) }] })
    const { r } = await whileInFlight(() => modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF).set('Content-Type', 'application/json').send(body))
    expect(r.status).toBe(400)
    expect(JSON.stringify(r.body.error)).toContain(`at most ${MAX_EXCLUDE_WINDOWS} exclusion windows`)
  })

  it('exclusion windows within the cap are applied in one sweep', async () => {
    const windows = Array.from({ length: MAX_EXCLUDE_WINDOWS }, (_, i) => [i + 0.2, i + 0.4]) // between samples: blanks nothing
    const r = await modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF).send({ steps: [{ op: 'exclude', windows: [...windows, [10, 12]] }] })
    expect(r.status, JSON.stringify(r.body)).toBe(400) // 1 001 windows
    const ok = await modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF).send({ steps: [{ op: 'exclude', windows: [...windows.slice(1), [10, 12]] }] })
    expect(ok.status, JSON.stringify(ok.body)).toBe(201)
    // samples at t = 10, 11, 12 in both columns
    expect(ok.body.steps.at(-1).details.blanked).toBe(6)
  })

  it('resampling to a million samples then an outlier window past samples × window is refused naming the limit', async () => {
    const { r, healthFirst } = await whileInFlight(() => modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF)
      .send({ steps: [{ op: 'resample', step: 0.001 }, { op: 'outliers', halfWindow: 500 }] }), threadBusy)
    expect(r.status).toBe(400)
    expect(r.body.error!.message).toContain(`exceeds the limit of ${MAX_FILTER_WORK} for samples × window`)
    expect(healthFirst).toBe(true)
  })

  it('work within the caps that passes the time limit is stopped with 422 naming the limit', async () => {
    const limits = pool().o
    const before = limits.timeLimitMs
    limits.timeLimitMs = 1000
    try {
      // about 2·10⁷ samples × window of Hampel filtering: several seconds of work
      const { r, healthFirst } = await whileInFlight(() => modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF)
        .send({ steps: [{ op: 'resample', step: 0.001 }, { op: 'outliers', halfWindow: 4, columns: ['level', 'valve'] }] }), threadBusy)
      expect(r.status).toBe(422)
      expect(r.body.error!.message).toMatch(/exceeded the time limit of 1 s .*PEWTER_REQUEST_TIME_LIMIT_SECONDS/)
      expect(healthFirst).toBe(true)
    } finally {
      limits.timeLimitMs = before
    }
    // the pool works again afterwards (a new thread replaces the stopped one)
    const again = await modeler.post(`${WS}/datasets/${datasetId}/condition`).set(CSRF).send({ steps: [{ op: 'trim', from: 0, to: 10 }] })
    expect(again.status).toBe(201)
  })

  /** an invented chain of n tanks with a nonlinear coupling (synthetic): seconds of hand-over analysis */
  const chainSheet = (n: number) => [
    `model "Hostile tank chain ${n} (synthetic)"`, 'time [s]', 'input u = 1', 'param k = 0.5 [1/s]',
    ...Array.from({ length: n }, (_, i) => `state x${i} = 0`),
    ...Array.from({ length: n }, (_, i) => `x${i}' = ${i === 0 ? 'u' : `sqrt(1 + x${i - 1}^2)`} - k * x${i} - 0.01 * x${i}^3`),
    `output y = x${n - 1}`,
  ].join('\n') + '\n'
  const chainModel = async (n: number) => {
    const m = await modeler.post(`${WS}/models`).set(CSRF).send({ title: `Hostile tank chain ${n} (synthetic)`, text: chainSheet(n) })
    expect(m.status, JSON.stringify(m.body)).toBe(201)
    return m.body.id as number
  }

  it('a heavy linearisation runs on the request pool: health answers meanwhile', async () => {
    const id = await chainModel(40)
    const { r, healthFirst } = await whileInFlight(() => modeler.post(`${WS}/models/${id}/versions/1/linearize`).set(CSRF).send({ frequencies: 2000 }), threadBusy)
    expect(r.status, JSON.stringify(r.body).slice(0, 300)).toBe(200)
    expect((r.body as unknown as { A: number[][] }).A).toHaveLength(40)
    expect(healthFirst).toBe(true)
  })

  it('a linearisation or export past the time limit is stopped with 422 naming the limit', async () => {
    const id = await chainModel(80)
    const limits = pool().o
    const before = limits.timeLimitMs
    limits.timeLimitMs = 1000
    try {
      const { r, healthFirst } = await whileInFlight(() => modeler.post(`${WS}/models/${id}/versions/1/linearize`).set(CSRF).send({ frequencies: 2000 }), threadBusy)
      expect(r.status).toBe(422)
      expect(r.body.error!.message).toMatch(/^Linearising Hostile tank chain 80 \(synthetic\), version 1 .*exceeded the time limit of 1 s .*PEWTER_REQUEST_TIME_LIMIT_SECONDS/)
      expect(healthFirst).toBe(true)
      const e = await modeler.post(`${WS}/models/${id}/versions/1/export`).set(CSRF).send({ format: 'ss-json', frequencies: 2000 })
      expect(e.status).toBe(422)
      expect(e.body.error.message).toMatch(/^Exporting .*exceeded the time limit/)
    } finally {
      limits.timeLimitMs = before
    }
  })

  it('dataset lists return summaries: column names and units, no per-column statistics', async () => {
    for (const url of [`${WS}/datasets`, `${WS}/projects/${pid}/datasets`]) {
      const r = await modeler.get(url)
      expect(r.status).toBe(200)
      const d = r.body.datasets.find((x: { id: number }) => x.id === datasetId)
      expect(d.columns).toEqual([{ name: 'level', header: 'level [m]', unit: 'm' }, { name: 'valve', header: 'valve', unit: '' }])
    }
    const one = await modeler.get(`${WS}/datasets/${datasetId}`)
    expect(one.body.columns[0].stats.count).toBe(1000)
  })
})
