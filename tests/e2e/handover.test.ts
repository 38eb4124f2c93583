/**
 * Browser: the hand-over tab of a model page. A modeler opens the heated buffer vessel template,
 * linearises it at its operating point, sees the level and the poles, the Bode and step plots, and
 * downloads the ES module. Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_handover') })
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 30_000, interval: 150 })

describe('browser: hand-over', () => {
  it('linearises a model version, draws its responses and downloads an export', async () => {
    const r = await rig.context.database.pool.query("select m.id from models m where m.title = 'Heated buffer vessel' order by m.id limit 1")
    const id = r.rows[0].id as number
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/library/${id}`)
    await page.getByRole('tab', { name: /Hand-over/ }).click()
    await page.locator('[data-testid="linearize"]').click()
    // q_in = 2e-3 m³/s through Cv·√h with Cv = 4e-3: h* = (q_in/Cv)² = 0.25 m (closed form of the sheet's outlet law)
    await poll(() => page.locator('[data-testid="operating-point"]').textContent()).toMatch(/h = 0\.25 m/)
    await poll(() => page.locator('[data-testid="poles"] .el-table__row').count()).toBe(2)
    await expect(page.locator('[data-testid="poles"]').textContent()).resolves.toMatch(/300/) // τ = 2 A √h*/Cv = 300 s
    await poll(() => page.locator('[data-testid="handover-panel"] .plotly-chart .main-svg').count()).toBeGreaterThan(1)
    // the pickers list what the sheet declares, in its order: 4 inputs × 2 outputs for the Bode plot (by
    // output, then input), the outputs for the step plot; picking the second output redraws the step plot for it
    const stepTitle = () => page.locator('[aria-label="step responses"] .ytitle').textContent()
    await poll(stepTitle).toBe('level [m]')
    const options = page.locator('.el-select-dropdown:visible .el-select-dropdown__item')
    await page.getByLabel('Input–output pair', { exact: true }).first().click({ force: true })
    await poll(() => options.allTextContents()).toEqual(['q_in → level', 'T_feed → level', 'P_h → level', 'opening → level', 'q_in → temp', 'T_feed → temp', 'P_h → temp', 'opening → temp'])
    await page.keyboard.press('Escape')
    await page.getByLabel('Output shown', { exact: true }).first().click({ force: true })
    await poll(() => options.allTextContents()).toEqual(['level', 'temp'])
    await options.filter({ hasText: 'temp' }).click()
    await poll(stepTitle).toBe('temp [K]')
    const [download] = await Promise.all([page.waitForEvent('download'), page.locator('[data-testid="export-js"]').click()])
    expect(download.suggestedFilename()).toBe('heated_buffer_vessel.mjs')
    // an FMU of a sheet with an input delay is refused with the reason
    await page.locator('[data-testid="export-fmu"]').click()
    await poll(() => page.locator('.el-message--error').textContent()).toMatch(/delays input/)
    await rig.screenshot(page, 'handover-panel')
  }, 150_000)
})
