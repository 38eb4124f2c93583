/**
 * Hand-over API: linearisation and exports of a model version, with overrides, errors and roles.
 * The sheet is the library tests' invented draining vessel (Tinmoor Works, fictional).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CSRF, demo, makeTestApp, signedIn, type Agent, type TestApp } from '../helpers/app'
import { drainSheet } from './library-sheets'
import { linearAnalysis } from '../../shared/api/handover'
import { RESULT_CAUTION } from '../../shared/api/runs'

let t: TestApp
let modeler: Agent
let viewer: Agent
const base = `/api/workspaces/${demo.ws}/models`
let modelId: number

beforeAll(async () => {
  t = await makeTestApp('handover')
  modeler = await signedIn(t.app, demo.modeler)
  viewer = await signedIn(t.app, demo.viewer)
  const r = await modeler.post(base).set(CSRF).send({ title: 'Draining vessel for hand-over', text: drainSheet })
  expect(r.status).toBe(201)
  modelId = r.body.id
})
afterAll(async () => { await t.close() })

describe('POST …/versions/:n/linearize', () => {
  it('returns the operating point and the linear model (viewers may read it)', async () => {
    const r = await viewer.post(`${base}/${modelId}/versions/1/linearize`).set(CSRF).send({ frequencies: 30 })
    expect(r.status).toBe(200)
    const a = linearAnalysis.parse(r.body)
    // h* = (q_in/k)² = 0.25 m; ∂f/∂h = −k/(2 A √h*) (closed form of the orifice outflow by differentiation)
    expect(a.x[0]).toBeCloseTo(0.25, 10)
    expect(a.A[0][0]).toBeCloseTo(-2e-3 / (2 * 1.5 * 0.5), 14)
    expect(a.frequencyResponse!.omega).toHaveLength(30)
    expect(a.stepResponses![0].nonlinear).not.toBeNull()
    expect(a.cautions).toEqual([RESULT_CAUTION])
    expect(a.provenance).toBe('sheet values')
  })
  it('applies parameter overrides and constant inputs, saying so', async () => {
    const r = await modeler.post(`${base}/${modelId}/versions/1/linearize`).set(CSRF).send({ set: { k: 4e-3 }, inputs: { q_in: 2e-3 }, frequencies: 0 })
    expect(r.status).toBe(200)
    expect(r.body.x[0]).toBeCloseTo(0.25, 10)
    expect(r.body.provenance).toMatch(/k = 0\.004 set by hand/)
  })
  it('names what is wrong: an unknown parameter, a bad body, a missing version', async () => {
    const a = await modeler.post(`${base}/${modelId}/versions/1/linearize`).set(CSRF).send({ set: { kk: 1 } })
    expect(a.status).toBe(400)
    expect(a.body.error.message).toMatch(/no parameter named 'kk'/)
    const b = await modeler.post(`${base}/${modelId}/versions/1/linearize`).set(CSRF).send({ at: -1 })
    expect(b.status).toBe(400)
    expect(JSON.stringify(b.body.error)).toMatch(/at/)
    const c = await modeler.post(`${base}/${modelId}/versions/9/linearize`).set(CSRF).send({})
    expect(c.status).toBe(404)
    const d = await modeler.post(`${base}/${modelId}/versions/1/linearize`).set(CSRF).send({ source: { kind: 'run', runId: 999999 } })
    expect(d.status).toBe(404)
  })
})

describe('POST …/versions/:n/export', () => {
  it('sends an FMU archive with modelDescription.xml and the version label', async () => {
    const r = await modeler.post(`${base}/${modelId}/versions/1/export`).set(CSRF).send({ format: 'fmu' })
      .buffer(true).parse((res, cb) => { const chunks: Buffer[] = []; res.on('data', (c: Buffer) => chunks.push(c)); res.on('end', () => cb(null, Buffer.concat(chunks))) })
    expect(r.status).toBe(200)
    expect(r.headers['content-disposition']).toMatch(/\.fmu"/)
    const body = r.body as Buffer
    expect(body.readUInt32LE(0)).toBe(0x04034b50) // a zip local header
    const text = body.toString('latin1')
    expect(text).toContain('modelDescription.xml')
    expect(text).toContain(`version 1 (model #${modelId})`)
  })
  it('sends A, B, C, D as CSV and the ES module as text', async () => {
    const csv = await modeler.post(`${base}/${modelId}/versions/1/export`).set(CSRF).send({ format: 'ss-csv' })
    expect(csv.status).toBe(200)
    expect(csv.headers['content-type']).toMatch(/text\/csv/)
    expect(csv.text).toMatch(/^A,h,h,-0\.00133333/m)
    const js = await modeler.post(`${base}/${modelId}/versions/1/export`).set(CSRF).send({ format: 'js', set: { k: 3e-3 } })
    expect(js.status).toBe(200)
    expect(js.text).toContain('export const rhs')
    expect(js.text).toContain('k = 0.003 set by hand')
    const bad = await modeler.post(`${base}/${modelId}/versions/1/export`).set(CSRF).send({ format: 'exe' })
    expect(bad.status).toBe(400)
  })
})
