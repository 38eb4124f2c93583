/**
 * The whole path in the browser: sign in, create a project, upload estimation and validation traces
 * (seeded synthetic data of the heated buffer vessel template, invented constants), bind the model
 * version to the columns, start a fit, follow its progress, and see the results and plots; then the
 * printable report. Screenshots go to test-artifacts/.
 */
import { afterAll, beforeAll, expect, it } from 'vitest'
import { mkdtempSync, writeFileSync } from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { eq } from 'drizzle-orm'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { bufferVesselCsv, BUFFER_TEMPLATE, templateVersion } from '../../server/services/demo-project'
import { workspaces } from '../../server/db/schema'
import { RESULT_CAUTION } from '../../shared/api/runs'

let rig: BrowserRig
let files: { est: string; val: string }

beforeAll(async () => {
  rig = await startBrowserRig('fitflow')
  const [ws] = await rig.context.db.select().from(workspaces).where(eq(workspaces.slug, 'tinmoor'))
  const tv = await templateVersion(rig.context.db, ws.id, BUFFER_TEMPLATE)
  if (!tv) throw new Error('template missing')
  const dir = mkdtempSync(path.join(os.tmpdir(), 'pewter-e2e-'))
  files = { est: path.join(dir, 'b2-estimation.csv'), val: path.join(dir, 'b2-validation.csv') }
  writeFileSync(files.est, bufferVesselCsv(tv.text, { seed: 21, label: 'browser test estimation' }))
  writeFileSync(files.val, bufferVesselCsv(tv.text, { seed: 22, label: 'browser test validation', T0: 300 }))
})
afterAll(async () => { await rig?.close() })

/** Opens an Element Plus select by its aria-label and picks the option with this text. */
async function choose(page: Page, label: string, option: string | RegExp) {
  await page.getByLabel(label, { exact: true }).first().click({ force: true })
  await page.locator('.el-select-dropdown:visible .el-select-dropdown__item').filter({ hasText: option }).first().click()
}

async function uploadFile(page: Page, file: string, purpose: 'estimation' | 'validation') {
  await page.getByTestId('upload-drop').locator('input[type=file]').setInputFiles(file)
  await page.getByTestId('upload-preview').waitFor()
  await choose(page, 'Use as', purpose)
  await page.getByTestId('upload-save').click()
  // the first upload also starts the request pool's thread (13 s measured alone on a 2-core machine; longer beside other suites)
  await page.getByTestId('datasets-table').getByText(path.basename(file, '.csv')).waitFor({ timeout: 60_000 })
}

it('goes from a CSV to a judged, exported fit in the browser', { timeout: 600_000 }, async () => {
  const page = await rig.newPage()
  const errors: string[] = []
  page.on('pageerror', (e) => errors.push(e.message))
  page.on('response', async (r) => { if (r.status() >= 400 && r.url().includes('/api/') && !r.url().endsWith('/api/auth/me') && !r.url().endsWith('/datasets')) errors.push(`${r.status()} ${r.url()}: ${await r.text().catch(() => '')}`) })
  await rig.signIn(page, 'modeler@tinmoor.example')
  await page.waitForURL(/\/w\/tinmoor\//)
  await page.goto(`${rig.baseUrl}/w/tinmoor/projects`)
  await page.getByRole('button', { name: 'New project' }).click()
  await page.getByLabel('Project name').fill('Browser test: buffer vessel B2')
  await page.getByRole('button', { name: 'Create project' }).click()
  await page.waitForURL(/\/projects\/\d+/)

  await uploadFile(page, files.est, 'estimation')
  await uploadFile(page, files.val, 'validation')
  await rig.screenshot(page, 'fit-flow-1-datasets')

  // a bad file is refused with the row and column named
  const bad = path.join(path.dirname(files.est), 'bad.csv')
  writeFileSync(bad, 't,level\n0,1\n1,oops\n')
  await page.getByTestId('upload-drop').locator('input[type=file]').setInputFiles(bad)
  await expect(page.getByTestId('preview-problems').textContent()).resolves.toMatch(/row 3, column level: 'oops' is not a number/)
  expect(await page.getByTestId('upload-save').isDisabled()).toBe(true)

  await page.getByRole('tab', { name: /Bindings/ }).click()
  await page.getByRole('button', { name: 'New binding' }).click()
  await choose(page, 'Model', 'Heated buffer vessel')
  await page.getByTestId('mapping-table').getByText('L/min').first().waitFor()
  await rig.screenshot(page, 'fit-flow-2-binding')
  await page.getByRole('button', { name: 'Save binding' }).click()
  await page.getByText('Binding saved.').waitFor()

  await page.getByRole('tab', { name: /Fit runs/ }).click()
  await page.getByRole('button', { name: 'New fit' }).click()
  await page.getByTestId('free-parameters').getByText('Cv').waitFor()
  await choose(page, 'Weighting', 'noise estimated (ML)')
  // multiple shooting with the suggested segment count
  await choose(page, 'Shooting', /^multiple/)
  await expect(page.getByTestId('segments-hint').textContent()).resolves.toMatch(/suggested \d+ from the record length/)
  await rig.screenshot(page, 'fit-flow-3-run-form')
  await page.getByRole('button', { name: 'Start fit' }).click()
  await page.waitForURL(/\/runs\/\d+$/).catch(async () => { await rig.screenshot(page, 'fit-flow-debug'); throw new Error(`no run page: ${errors.join(' | ')}`) })
  await page.locator('[data-status="succeeded"]').first().waitFor({ timeout: 180_000 })
  await page.getByTestId('parameter-table').waitFor()
  // lifecycle and optimiser outcome are two tags: "finished" and "converged (… test)"
  await expect(page.getByTestId('run-status').textContent()).resolves.toBe('finished')
  await expect(page.getByTestId('run-outcome').textContent()).resolves.toMatch(/^converged \((gradient|step-size|cost-change) test\)$/)
  await expect(page.getByTestId('caution').first().textContent()).resolves.toContain(RESULT_CAUTION)
  const table = await page.getByTestId('parameter-table').textContent()
  for (const name of ['Cv', 'UA', 'tau', 'T']) expect(table).toContain(name)
  await expect(page.getByTestId('metrics-table').textContent()).resolves.toMatch(/validation/)
  // the plots are drawn: measured vs simulated (4), residuals, autocorrelation, correlation, landscape
  try {
    await expect.poll(() => page.locator('[data-testid="plot"] .main-svg').count(), { timeout: 150_000, interval: 500 }).toBeGreaterThanOrEqual(8)
    await page.locator('[aria-label="cost landscape contour"] .contourlayer').first().waitFor({ state: 'attached', timeout: 150_000 })
  } catch (e) {
    await rig.screenshot(page, 'fit-flow-failed-results')
    throw new Error(`plots not drawn (${await page.locator('[data-testid="plot"] .main-svg').count()} svg): ${String(e)} ${errors.join(' | ')}`, { cause: e })
  }
  // segment starts of the multiple-shooting fit: the note and dotted lines on the measured-vs-simulated plots
  await expect(page.getByTestId('segments-note').textContent()).resolves.toMatch(/Multiple shooting over \d+ segments .*≤ tolerance/)
  expect(await page.locator('[data-testid="plot"] .shapelayer path').count()).toBeGreaterThan(0)
  await rig.screenshot(page, 'fit-flow-4-results')

  const runUrl = page.url()
  const rid = Number(/\/runs\/(\d+)$/.exec(runUrl)![1])
  const csvHref = await page.getByRole('link', { name: 'Export CSV' }).getAttribute('href')
  const csv = await page.request.get(`${rig.baseUrl}${csvHref}`)
  expect(csv.status()).toBe(200)
  expect((await csv.text()).split('\r\n')[0]).toBe(`# ${RESULT_CAUTION}`)

  await page.getByRole('button', { name: 'Printable report' }).click()
  await page.waitForURL(/\/report$/)
  await expect(page.getByTestId('report-caution').textContent()).resolves.toContain(RESULT_CAUTION)
  await page.getByTestId('parameter-table').waitFor()
  await rig.screenshot(page, 'fit-flow-5-report')

  // two runs side by side (here the same run twice: the page lays out any two)
  await page.goto(`${rig.baseUrl}/w/tinmoor/runs/compare?a=${rid}&b=${rid}`)
  await expect.poll(() => page.getByTestId('parameter-table').count(), { timeout: 30_000, interval: 300 }).toBe(2)
  await rig.screenshot(page, 'fit-flow-6-compare')

  // the dataset page: statistics, notes saying the data are invented, a plot per column
  await page.goto(`${rig.baseUrl}/w/tinmoor/data`)
  await page.getByRole('link', { name: 'b2-estimation' }).first().click()
  await page.waitForURL(/\/data\/\d+$/)
  await page.getByTestId('column-stats').getByText('degC').first().waitFor()
  await page.getByText(/Invented data \(synthetic\)/).first().waitFor()
  await expect.poll(() => page.locator('[data-testid="plot"] .main-svg').count(), { timeout: 150_000, interval: 500 }).toBeGreaterThanOrEqual(6)
  await rig.screenshot(page, 'fit-flow-7-dataset')
  expect(errors).toEqual([])
})
