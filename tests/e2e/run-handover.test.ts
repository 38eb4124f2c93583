/**
 * Browser: handing a finished run on. The run page offers the calibrated sheet; the
 * printable report shows the residual checks and no legend lies over a plot or an axis title; a saved
 * parameter set fills the starts of a new fit and the values of the model's quick simulation.
 * The run is fitted beforehand over the API on seeded synthetic traces of the heated buffer vessel
 * template (invented constants). Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { CSRF, demo } from '../helpers/app'
import { legendOverlaps } from '../helpers/layout'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { bufferVesselCsv, BUFFER_TEMPLATE, templateVersion } from '../../server/services/demo-project'
import { workspaces } from '../../server/db/schema'
import { eq } from 'drizzle-orm'

let rig: BrowserRig
let tv: { modelId: number; number: number; text: string }
let pid: number
let rid: number
let setName: string
let cv: number

const WS = '/api/workspaces/tinmoor'
const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 30_000, interval: 150 })

beforeAll(async () => {
  rig = await startBrowserRig('e2e_run_handover')
  const [ws] = await rig.context.db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
  const t = await templateVersion(rig.context.db, ws.id, BUFFER_TEMPLATE)
  if (!t) throw new Error('template missing')
  tv = t
  const api = request.agent(rig.baseUrl)
  expect((await api.post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: DEMO_PASSWORD })).status).toBe(200)
  pid = (await api.post(`${WS}/projects`).set(CSRF).send({ name: 'Hand-on in the browser (synthetic)', description: 'made by a test' })).body.id
  const up = (name: string, csv: string, purpose: string) => api.post(`${WS}/projects/${pid}/datasets`).set(CSRF).field('purpose', purpose).attach('file', Buffer.from(csv), name)
  const est = await up('est.csv', bufferVesselCsv(tv.text, { seed: 31, label: 'browser hand-on estimation' }), 'estimation')
  const val = await up('val.csv', bufferVesselCsv(tv.text, { seed: 32, label: 'browser hand-on validation', T0: 300 }), 'validation')
  const b = await api.post(`${WS}/projects/${pid}/bindings`).set(CSRF).send({ modelId: tv.modelId, version: tv.number, datasetId: est.body.id })
  const r = await api.post(`${WS}/projects/${pid}/runs`).set(CSRF)
    .send({ modelId: tv.modelId, version: tv.number, bindingId: b.body.id, estimation: [est.body.id], validation: [val.body.id], weighting: 'ml', seed: 9, name: 'hand-on fit' })
  expect(r.status).toBe(201)
  rid = r.body.id
  for (let i = 0; ; i++) {
    const s = await api.get(`${WS}/runs/${rid}`)
    if (s.body.status === 'succeeded') { cv = s.body.result.parameters.find((p: { name: string }) => p.name === 'Cv').value; break }
    if (['failed', 'cancelled'].includes(s.body.status) || i > 1200) throw new Error(`run ${rid}: ${s.body.status} ${s.body.error}`)
    await new Promise((res) => setTimeout(res, 100))
  }
  setName = 'B2 hand-on set'
  expect((await api.post(`${WS}/runs/${rid}/parameter-sets`).set(CSRF).send({ name: setName })).status).toBe(201)
}, 240_000)
afterAll(async () => { await rig?.close() })

describe('browser: handing a run on', () => {
  it('offers the calibrated sheet, reports residual checks without overlapping legends, applies a saved set', async () => {
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)

    // run page: the calibrated sheet is offered (its contents: tests/api/run-exports.test.ts)
    await page.waitForLoadState('networkidle')
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${rid}`)
    await page.getByTestId('calibrated-sheet').waitFor({ state: 'visible', timeout: 60_000 })

    // report: residual checks present; every legend clear of the plotting area and the axis titles
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${rid}/report`)
    await page.getByRole('region', { name: 'Residual checks' }).waitFor()
    await poll(() => page.locator('section[aria-label="Residual checks"] .plotly-chart .main-svg').count()).toBeGreaterThan(2)
    await poll(() => page.locator('section[aria-label="Measured and simulated outputs"] .plotly-chart g.legend').count()).toBeGreaterThan(0)
    await page.waitForTimeout(500)
    const overlaps = await legendOverlaps(page)
    expect(overlaps.legends).toBeGreaterThan(0)
    expect(overlaps.found).toEqual([])
    await rig.screenshot(page, 'run-report-residuals')

    // a new fit starts from the saved set
    await page.goto(`${rig.baseUrl}/w/tinmoor/projects/${pid}`)
    await page.getByRole('tab', { name: /Fit runs/ }).click()
    await page.getByRole('button', { name: 'New fit' }).click()
    await page.getByTestId('free-parameters').getByText('Cv').waitFor()
    await page.getByLabel('Start from a saved parameter set', { exact: true }).first().click({ force: true })
    await page.locator('.el-select-dropdown:visible .el-select-dropdown__item').filter({ hasText: setName }).first().click()
    await poll(() => page.getByTestId('start-from-set-note').textContent()).toMatch(new RegExp(`Starts of .*Cv.* taken from '${setName}'`))
    const start = await page.getByLabel('start Cv', { exact: true }).inputValue()
    expect(Number(start)).toBeCloseTo(cv, 6)
    await rig.screenshot(page, 'run-form-from-set')

    // the model's quick simulation applies the set
    await page.goto(`${rig.baseUrl}/w/tinmoor/library/${tv.modelId}`)
    await page.locator('[data-testid="open-sim"]').click()
    await page.getByLabel('Apply a saved parameter set', { exact: true }).first().click({ force: true })
    await page.locator('.el-select-dropdown:visible .el-select-dropdown__item').filter({ hasText: setName }).first().click()
    await poll(() => page.getByTestId('apply-set-note').textContent()).toMatch(new RegExp(`Cv.* from '${setName}'`))
    const shown = await page.locator('.quick-sim__param[data-param="Cv"] .quick-sim__value').textContent()
    // the panel's own number format: 6 significant digits, exponent form below 1e-3
    const expected = Math.abs(cv) < 1e-3 ? cv.toExponential(3) : String(Number(cv.toPrecision(6)))
    expect(shown).toContain(expected)
    await rig.screenshot(page, 'quick-simulation-from-set')
  }, 200_000)
})
