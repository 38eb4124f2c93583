/// <reference lib="dom" />
/**
 * Browser: the quick simulation driven by a dataset's record. On the buffer-vessel model page the modeler
 * picks the demo project's validation record (seeded synthetic data of the invented Tinmoor Works
 * plant, server/services/demo-project.ts), sees its measured outputs as markers beside the simulated
 * lines with the RMSE per output, applies the parameter set saved from the demo fit and sees the level's
 * RMSE fall, and maps an output to a column whose unit does not convert and reads why in words.
 * Screenshots at 1440 and 390 px. Needs dist/.
 */
import { seededDemoProject } from '../helpers/demo-project'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { eq } from 'drizzle-orm'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { users } from '../../server/db/schema'
import { saveParameterSet } from '../../server/services/runs'

let rig: BrowserRig
let modelId: number
beforeAll(async () => {
  rig = await startBrowserRig('e2e_quick_record')
  const { project: p, run: r } = await seededDemoProject(rig.context.db)
  const [u] = await rig.context.db.select().from(users).where(eq(users.email, demo.modeler))
  await saveParameterSet(rig.context.db, p.workspaceId, r.id, u.id, 'B2 calibrated (demo)')
  modelId = r.modelId
}, 240_000)
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T, timeout = 30_000) => expect.poll(fn, { timeout, interval: 150 })

describe('browser: quick simulation on a dataset record', () => {
  it('plots a record\'s measurements beside the simulation with the RMSE, with a saved parameter set, and explains a bad mapping', async () => {
    const page = await rig.newPage()
    await page.setViewportSize({ width: 1440, height: 900 })
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/library/${modelId}`)
    await page.locator('[data-testid="open-sim"]').click()
    await poll(() => page.locator('[data-testid="quick-sim-plot"] .main-svg').count(), 60_000).toBeGreaterThan(0)

    await page.getByTestId('quick-sim-source').getByText('Dataset record').click()
    await page.getByTestId('record-project').click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Buffer vessel B2 calibration (demo)' }).first().click()
    await page.getByTestId('record-dataset').click()
    // each dataset is offered with its columns and units
    const option = page.locator('.el-select-dropdown__item:visible', { hasText: 'b2-shift-validation' }).first()
    await expect(option.textContent()).resolves.toMatch(/level \[cm\].*temp \[degC\]/)
    await option.click()

    // matched by name, units converted to the sheet's
    await poll(() => page.getByTestId('record-columns').textContent()).toMatch(/241 samples/)
    await expect(page.getByTestId('record-mapping').textContent()).resolves.toMatch(/cm → m/)
    const rmse = async (output: string) => {
      const text = (await page.locator(`[data-testid="quick-sim-rmse"] tr[data-output="${output}"] td`).nth(2).textContent()) ?? ''
      return Number(text.split(' ')[0])
    }
    await poll(() => page.locator('[data-testid="quick-sim-rmse"] tr[data-output]').count(), 60_000).toBe(2)
    await expect(page.locator('[data-testid="quick-sim-rmse"] tr[data-output="level"]').textContent()).resolves.toMatch(/level\s*level\s*[\d.e-]+ m\s*241/)
    await expect(page.locator('[data-testid="quick-sim-rmse"] tr[data-output="temp"]').textContent()).resolves.toMatch(/ K/)
    // measured markers and a simulated line for each output, in one row per output
    await expect(page.getByTestId('quick-sim-key').textContent()).resolves.toMatch(/measured \(markers.*level simulated \(line\).*temp simulated \(line\)/)
    expect(await page.locator('[data-testid="quick-sim-plot"] .scatterlayer .trace').count()).toBe(4)
    expect(await page.locator('[data-testid="quick-sim-plot"] .scatterlayer .trace .points path').count()).toBe(2 * 241)
    expect(await page.locator('[data-testid="quick-sim-plot"] .scatterlayer .trace .js-line').count()).toBe(2)
    const yTitles = await page.locator('[data-testid="quick-sim-plot"] .ytitle, [data-testid="quick-sim-plot"] .y2title').allTextContents()
    expect(yTitles).toEqual(['level [m]', 'temp [K]'])
    await expect(page.locator('.quick-sim__status').textContent()).resolves.toMatch(/241 samples of 'b2-shift-validation'/)
    const atSheet = await rmse('level')

    // the parameter set saved from the demo fit: the level follows its record far closer (seeded noise σ 0.5 cm)
    await page.getByTestId('apply-set').click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'B2 calibrated (demo)' }).first().click()
    await poll(() => page.getByTestId('apply-set-note').textContent()).toMatch(/Cv.*from 'B2 calibrated \(demo\)'/)
    await poll(() => rmse('level'), 30_000).toBeLessThan(atSheet / 3)
    expect(await rmse('level')).toBeLessThan(0.01)
    await page.waitForLoadState('networkidle')
    await rig.screenshot(page, 'quick-simulation-record-1440')
    await page.setViewportSize({ width: 390, height: 844 })
    await page.waitForTimeout(400)
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth + 1)).toBe(true)
    await rig.screenshot(page, 'quick-simulation-record-390')
    await page.setViewportSize({ width: 1440, height: 900 })

    // an output mapped to a flow column: the unit does not convert, said in the row and above the plot
    await page.locator('[data-signal="level"] .el-select').click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'q_in [L/min]' }).first().click()
    await poll(() => page.locator('[data-signal="level"] .record-picker__problem').textContent()).toMatch(/the column's unit 'L\/min' .* does not convert to the sheet's unit 'm'/)
    await poll(() => page.locator('.quick-sim__message--error').textContent()).toMatch(/output 'level' ← column 'q_in': the column's unit 'L\/min'/)
    // an input left unmapped: its sheet value is used, and the panel says so
    await page.locator('[data-signal="level"] .el-select').click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'level [cm]' }).first().click()
    await page.locator('[data-signal="P_h"] .el-select').hover()
    await page.locator('[data-signal="P_h"] .el-select__clear').click()
    await poll(() => page.getByTestId('quick-sim-warnings').textContent()).toMatch(/No column for input 'P_h': its sheet value 0 W is used over the whole record/)
    await rig.screenshot(page, 'quick-simulation-record-mapping-1440')
    await page.close()
  }, 300_000)
})
