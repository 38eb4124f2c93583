/**
 * Browser: diagnostics a newcomer can act on. A modeler starts a model from a template, types a
 * parameter line with a misspelt unit, sees the marker on that line and applies the quick fix
 * (Ctrl+.), then does the same for a misspelt keyword, and fixes a misspelt name from the problems
 * list; the sheet checks clean again. The fixes come
 * from the check's diagnostics (shared checker); the editor only applies them.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { cursorAt } from '../helpers/monaco'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_quick_fixes') })
afterAll(async () => { await rig?.close() })

/** waits up to 30 s: the machine is shared and the first Monaco load takes a while */
const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 30_000, interval: 100 })

/** the lines Monaco shows (non-breaking spaces as spaces; Monaco renders only the visible ones) */
const shownLines = async (page: Page) =>
  (await page.locator('.monaco-editor .view-line').allTextContents()).map((t) => t.replace(/\u00a0/g, ' '))

async function templateLines(title: string): Promise<number> {
  const r = await rig.context.database.pool.query(
    'select v.text from model_versions v join models m on m.id = v.model_id where m.title = $1 and m.template is not null and v.number = 1', [title])
  return (r.rows[0].text as string).split('\n').length
}

/** Opens the quick fixes at the cursor (Ctrl+.), shows them in a screenshot and applies the one titled `title`. */
async function applyQuickFix(page: Page, title: string, shot: string) {
  await page.keyboard.press('Control+.')
  const row = page.locator('.action-widget .monaco-list-row.action', { hasText: title })
  await poll(() => row.count()).toBeGreaterThan(0)
  await rig.screenshot(page, shot)
  // a full-page screenshot may close the menu: open it again
  if (!(await row.first().isVisible())) await page.keyboard.press('Control+.')
  await row.first().click()
}

/** Types a new last line after the `lines` lines of the sheet; returns its number. */
async function appendLine(page: Page, lines: number, text: string): Promise<number> {
  await page.keyboard.press('Control+End')
  await page.keyboard.press('Enter')
  await page.keyboard.press('Home')
  await page.keyboard.type(text)
  await page.keyboard.press('Escape')
  return lines + 1
}

describe('browser: quick fixes in the sheet editor', () => {
  it('marks a misspelt unit and keyword and fixes each with its quick fix', async () => {
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.locator('[data-testid="new-model"]').click()
    await page.locator('.el-dialog:visible .el-select').first().click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Heated buffer vessel' }).first().click()
    await page.getByLabel('Title').fill('Buffer B-9 (invented)')
    await page.locator('[data-testid="create-model"]').click()
    await page.waitForURL(/\/w\/tinmoor\/library\/\d+$/)
    await page.locator('.monaco-editor .view-lines').waitFor()
    await poll(() => page.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)
    await page.locator('.monaco-editor .view-lines').click()
    let lines = await templateLines('Heated buffer vessel')

    // a misspelt unit: the marker on its line, then the quick fix writes kW
    const unitLine = await appendLine(page, lines++, 'param P_spare = 2 [kw] fixed "standby heater (invented)"')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe(String(unitLine))
    await poll(() => page.locator('.monaco-editor .squiggly-error').count()).toBeGreaterThan(0)
    await cursorAt(page, unitLine, 'param P_spare = 2 [k'.length)
    await applyQuickFix(page, "Change to 'kW'", 'quick-fix-unit')
    await poll(() => shownLines(page)).toContain('param P_spare = 2 [kW] fixed "standby heater (invented)"')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('')

    // a misspelt keyword: one marker only (P_spare2 is still declared), fixed the same way
    const kwLine = await appendLine(page, lines, 'parm P_spare2 = 1 [kW] fixed')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe(String(kwLine))
    await cursorAt(page, kwLine, 2)
    await applyQuickFix(page, "Change to 'param'", 'quick-fix-keyword')
    await poll(() => shownLines(page)).toContain('param P_spare2 = 1 [kW] fixed')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('')

    // a misspelt name: the problems list offers the same kind of fix beside the message
    lines += 1
    const nameLine = await appendLine(page, lines, 'let spare_total = P_spar + P_spare2 [kW]')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe(String(nameLine))
    await poll(() => page.locator('[data-testid="problems"]').textContent()).toContain("unknown name 'P_spar' (did you mean 'P_spare'?)")
    await rig.screenshot(page, 'quick-fix-problems-list')
    await page.locator('[data-testid="problem-fix"]', { hasText: "Change to 'P_spare'" }).click()
    await poll(() => shownLines(page)).toContain('let spare_total = P_spare + P_spare2 [kW]')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('')
    await poll(() => page.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)
    await rig.screenshot(page, 'quick-fix-applied')
    await page.close()
  }, 180_000)
})
