/**
 * Browser: the results of a finished run in Pewter's own look. The demo project's first fit (invented
 * plant, seeded synthetic data) is run, then its page shows each output inside its covariance band,
 * the verdict table of the residual checks with p-values, the cumulative periodogram, and the
 * correlation plots only on request, with lags in the sheet's time unit. Then the fit is evaluated on
 * the record it never saw (nothing free), the two runs are compared with both simulations overlaid, and the
 * run list shows the figure on unseen data beside the cost. Screenshots at 1440 and 390 px go to test-artifacts/.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { overflowing } from '../helpers/layout'
import { seedDemoProject } from '../../server/services/demo-project'

let rig: BrowserRig
let runId: number
beforeAll(async () => {
  rig = await startBrowserRig('e2e_results')
  await seedDemoProject(rig.context.db)
  const r = await rig.context.database.pool.query("select id from runs where status = 'succeeded' order by id limit 1")
  runId = r.rows[0].id as number
}, 300_000)
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 60_000, interval: 200 })

describe('browser: run results', () => {
  it('draws the band, the verdict table and the periodogram; correlations on demand', async () => {
    const page = await rig.newPage()
    const errors: string[] = []
    page.on('pageerror', (e) => errors.push(e.message))
    await page.setViewportSize({ width: 1440, height: 900 })
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${runId}`)
    await page.getByTestId('parameter-table').waitFor()
    await expect(page.getByTestId('band-note').textContent()).resolves.toMatch(/shaded band .* covariance/)
    // four output panels (level and temp on the estimation and validation records), each with a filled band
    await poll(() => page.locator('[aria-label="Measured and simulated outputs"] .main-svg').count()).toBeGreaterThanOrEqual(4)
    await poll(() => page.locator('[aria-label="Measured and simulated outputs"] path.js-fill').count()).toBeGreaterThanOrEqual(4)
    // one verdict table per output and record: whiteness (periodogram, Ljung–Box), the four inputs, normality
    const tables = page.getByTestId('verdict-table')
    await expect(tables.count()).resolves.toBe(4)
    const first = tables.first()
    await expect(first.locator('tbody tr').count()).resolves.toBe(2 + 4 + 1)
    const text = await first.textContent()
    expect(text).toMatch(/cumulative periodogram/)
    expect(text).toMatch(/Independence from input q_in/)
    expect(text).toMatch(/Jarque–Bera/)
    expect(text).toMatch(/lags up to \d+(\.\d+)? s/) // lags in the sheet's time unit, not samples
    await expect(first.locator('tbody tr').first().locator('td').nth(1).textContent()).resolves.toMatch(/^(< 0\.001|[01]\.\d{3})$/)
    await poll(() => page.locator('[aria-label="cumulative periodogram"] .js-plotly-plot').count()).toBe(4)
    // correlations are collapsed until asked for
    await expect(page.getByTestId('correlation-plots').count()).resolves.toBe(0)
    await page.getByTestId('toggle-correlations').first().click()
    await page.getByTestId('correlation-plots').waitFor()
    await poll(() => page.locator('[aria-label="residual autocorrelation"] .js-plotly-plot').count()).toBe(1)
    await expect(page.locator('[aria-label="residual autocorrelation"] .xtitle').textContent()).resolves.toBe('lag [s]')
    await rig.screenshot(page, 'run-results-1440')
    expect(await overflowing(page)).toEqual([])

    await page.setViewportSize({ width: 390, height: 844 })
    // the tables lay themselves out again after the resize (Element Plus observes their width)
    await poll(() => overflowing(page)).toEqual([])
    await rig.screenshot(page, 'run-results-390')

    // the printable report carries the verdict tables too
    await page.setViewportSize({ width: 1440, height: 900 })
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${runId}/report`)
    await poll(() => page.getByTestId('verdict-table').count()).toBe(4)
    expect(errors).toEqual([])
  }, 240_000)

  it('evaluates the fit on new data, compares the two runs and lists the unseen-data figure', async () => {
    const page = await rig.newPage()
    const errors: string[] = []
    page.on('pageerror', (e) => errors.push(e.message))
    await page.setViewportSize({ width: 1440, height: 900 })
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/${runId}`)
    await page.getByTestId('parameter-table').waitFor()
    await page.getByTestId('evaluate').click().catch(async (e) => { await rig.screenshot(page, 'debug-evaluate'); throw e })
    const dialog = page.getByTestId('evaluation-dialog')
    // the record the fit never saw is suggested
    await poll(() => dialog.locator('.el-select__selected-item').allTextContents()).toContain('b2-shift-validation')
    await dialog.getByTestId('start-evaluation').click()
    await page.waitForURL((u) => !u.pathname.endsWith(`/runs/${runId}`) && /\/runs\/\d+$/.test(u.pathname))
    const evalId = Number(/\/runs\/(\d+)$/.exec(page.url())![1])
    await page.getByTestId('evaluation-summary').waitFor({ timeout: 120_000 })
    await expect(page.getByTestId('run-kind').textContent()).resolves.toBe('evaluation')
    await expect(page.getByTestId('evaluation-summary').textContent()).resolves.toMatch(/values from B2 first calibration \(demo\).*initial states estimated/)
    await poll(() => page.getByTestId('verdict-table').count()).toBe(2)
    expect(await page.getByTestId('result-problem').count()).toBe(0) // read by the evaluation's own schema
    await expect(page.getByTestId('evaluation-values').textContent()).resolves.toMatch(/Cv.*the fit/)
    await rig.screenshot(page, 'run-evaluation-1440')
    await page.setViewportSize({ width: 390, height: 844 })
    await poll(() => overflowing(page)).toEqual([])
    await rig.screenshot(page, 'run-evaluation-390')

    // the runs list: the evaluation figure beside the cost
    await page.setViewportSize({ width: 1440, height: 900 })
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs`)
    await poll(() => page.getByTestId('validation-figure').count()).toBeGreaterThanOrEqual(2)
    await expect(page.getByTestId('validation-figure').allTextContents()).resolves.toEqual(expect.arrayContaining([expect.stringMatching(/evaluation NRMSE \d/), expect.stringMatching(/validation NRMSE \d/)]))

    // compare: which versions, the settings that differ, both simulations over the measurements
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/compare?a=${runId}&b=${evalId}`)
    await poll(() => page.getByTestId('compare-versions').textContent()).toMatch(/Both ran Heated buffer vessel version 1/)
    await expect(page.locator('[data-testid="compare-settings"] tr[data-differs="true"] th').allTextContents()).resolves.toEqual(expect.arrayContaining(['Kind', 'Estimation records']))
    // level and temp on the estimation record (fit only) and on the validation record (both runs)
    await poll(() => page.locator('figure[aria-label^="overlay "] .js-plotly-plot').count()).toBe(4)
    await poll(() => page.locator('figure[aria-label="overlay level · b2-shift-validation"] .scatterlayer .trace').count()).toBe(3)
    // each slot shows its run's own part: the fit's estimates, the evaluation's values
    await expect(page.getByTestId('parameter-table').count()).resolves.toBe(1)
    await expect(page.getByTestId('compare-values').textContent()).resolves.toMatch(/Nothing free; values from/)
    await rig.screenshot(page, 'run-compare-1440')
    expect(await overflowing(page)).toEqual([])
    await page.setViewportSize({ width: 390, height: 844 })
    await poll(() => overflowing(page)).toEqual([])
    await rig.screenshot(page, 'run-compare-390')

    expect(errors).toEqual([])
  }, 300_000)
})
