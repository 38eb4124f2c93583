/**
 * Browser: a model whose stored version writes derivatives in the older form `h' = …` opens in the
 * sheet editor with a warning on each such line; the quick fix (Ctrl+.) rewrites one line as
 * dh/dt = …, the second fix rewrites every remaining line, and the sheet then has no warning left.
 * The sheet is an invented example. Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { insertLibraryModel } from '../../server/services/models'
import { checkModel } from '../../shared/sheet/index'
import { cursorAt } from '../helpers/monaco'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_leibniz') })
afterAll(async () => { await rig?.close() })

/** waits up to 20 s: the machine is shared and the first Monaco load takes a while */
const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 20_000, interval: 100 })

const OLDER = `model "Three tanks in the older form (invented)"
time [s]
param k = 0.05 [1/s] in [0.001, 1] "outflow rate"
state h1 = 2 [m]
state h2 = 1 [m]
state h3 = 0.5 [m]
h1' = -k * h1
h2' = k * (h1 - h2)
h3' = k * (h2 - h3)   # the last tank
output level = h3 [m] sigma 0.01`

async function storeOlderModel(): Promise<number> {
  const pool = rig.context.database.pool
  const ws = await pool.query('select id from workspaces where slug = $1', ['tinmoor'])
  const user = await pool.query('select id from users where email = $1', [demo.modeler])
  const check = checkModel(OLDER)
  expect(check.ok).toBe(true)
  const m = await insertLibraryModel(rig.context.database.db, ws.rows[0].id as number, {
    title: 'Three tanks, older form (invented)', description: 'A stored version in the older derivative form', tags: [],
    text: OLDER, note: 'stored before Leibniz notation', summary: check.summary, ownerId: user.rows[0].id as number,
  })
  return m.id
}

async function lineText(page: Page, line: number): Promise<string> {
  // Monaco renders non-breaking spaces in its view lines
  const all = await page.locator('.monaco-editor .view-lines .view-line').allTextContents()
  const tops = await page.locator('.monaco-editor .view-lines .view-line').evaluateAll((els) => els.map((e) => parseFloat((e as HTMLElement).style.top)))
  const ordered = all.map((t, i) => ({ t: t.replace(/\u00a0/g, ' '), top: tops[i] })).sort((a, b) => a.top - b.top)
  return ordered[line - 1]?.t ?? ''
}

async function quickFix(page: Page, title: string) {
  await page.keyboard.press('Control+.')
  const item = page.locator('.action-widget').getByText(title, { exact: true })
  await item.waitFor()
  await item.click()
}

describe('browser: derivative lines in the older form', () => {
  it('opens with a warning per line, and the quick fixes rewrite one line and then every line', async () => {
    const id = await storeOlderModel()
    const page = await rig.newPage()
    await page.setViewportSize({ width: 1440, height: 900 })
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.goto(`${rig.baseUrl}/w/tinmoor/library/${id}`)
    await page.locator('.monaco-editor .view-lines').waitFor()
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('7 8 9')
    await poll(() => page.locator('[data-testid="problems"]').textContent()).toMatch(/line 7, col 1.*write dh1\/dt = … ; h1' is the older form/s)
    await poll(() => page.locator('.monaco-editor .squiggly-warning').count()).toBeGreaterThan(0)
    // warnings only: the sheet still checks
    await poll(() => page.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)
    await rig.screenshot(page, 'leibniz-older-form-warnings-1440')

    // the quick fix of one line
    await page.locator('.monaco-editor .view-lines').click()
    await cursorAt(page, 8)
    await quickFix(page, 'Rewrite as dh2/dt = …')
    await poll(() => lineText(page, 8)).toBe('dh2/dt = k * (h1 - h2)')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('7 9')

    // the quick fix of every remaining line
    await cursorAt(page, 9)
    await page.keyboard.press('Control+.')
    await poll(() => page.locator('.action-widget').first().textContent()).toMatch(/Rewrite as dh3\/dt = ….*Rewrite all 2 x' lines as dx\/dt/s)
    // the window as it is: a full-page shot resizes the page for a moment, and the editor closes its menu on a resize
    await rig.screenshot(page, 'leibniz-quick-fix-menu-1440', { viewport: true })
    await page.locator('.action-widget').getByText("Rewrite all 2 x' lines as dx/dt", { exact: true }).click()
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('')
    expect(await lineText(page, 7)).toBe('dh1/dt = -k * h1')
    expect(await lineText(page, 9)).toBe('dh3/dt = k * (h2 - h3)   # the last tank')
    await poll(() => page.locator('.sheet-summary').textContent()).toMatch(/No errors or warnings/)
    await rig.screenshot(page, 'leibniz-rewritten-1440')
    await page.setViewportSize({ width: 390, height: 844 })
    await page.locator('.monaco-editor .view-lines').waitFor()
    await rig.screenshot(page, 'leibniz-rewritten-390')
  })
})
