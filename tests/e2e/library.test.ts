/**
 * Browser: the library and the sheet editor. A modeler starts a model from a template, types an
 * unknown name and sees the marker on that line, fixes it, changes a parameter, publishes version 2
 * with a note; another modeler forks it and compares the fork with its origin; a reviewer approves; a
 * publish on an outdated base. Each test after the first starts from its own model made through the API
 * (the same template fork and version 2 the first test makes in the browser), so any one runs alone.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { CSRF, demo } from '../helpers/app'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { cursorAt } from '../helpers/monaco'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_library') })
afterAll(async () => { await rig?.close() })

/** waits up to 20 s: the machine is shared and the first Monaco load takes a while */
const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 20_000, interval: 100 })

const lazyChunks = /register\.all|plotly|editor\.worker|\/format-/

async function templateText(title: string): Promise<string> {
  const r = await rig.context.database.pool.query(
    'select v.text from model_versions v join models m on m.id = v.model_id where m.title = $1 and m.template is not null and v.number = 1', [title])
  return r.rows[0].text as string
}

/** The sheet with its heat-loss coefficient UA changed from 150 to 180 W/K, as the first test types it. */
function withUa180(text: string): string {
  return text.split('\n').map((l) => (/^param\s+UA\s*=/.test(l) ? l.replace('150', '180') : l)).join('\n')
}

/**
 * The modeler's "Buffer B-7 (invented)" made through the API as the first test makes it in the browser:
 * a fork of the heated buffer vessel template, then version 2 with UA 180 W/K. Returns its page URL.
 */
async function publishedModel(): Promise<string> {
  const api = request.agent(rig.baseUrl)
  expect((await api.post('/api/auth/signin').set(CSRF).send({ email: demo.modeler, password: DEMO_PASSWORD })).status).toBe(200)
  const base = `/api/workspaces/${demo.ws}/models`
  const tpl = await rig.context.database.pool.query("select id from models where title = 'Heated buffer vessel' and template is not null")
  const fork = await api.post(`${base}/${tpl.rows[0].id}/fork`).set(CSRF).send({ title: 'Buffer B-7 (invented)' })
  expect(fork.status).toBe(201)
  const v1 = await api.get(`${base}/${fork.body.id}/versions/1`)
  const v2 = await api.post(`${base}/${fork.body.id}/versions`).set(CSRF)
    .send({ text: withUa180(v1.body.text), note: 'UA raised to 180 W/K after the insulation survey (invented)', baseVersion: 1 })
  expect(v2.status).toBe(201)
  return `${rig.baseUrl}/w/${demo.ws}/library/${fork.body.id}`
}

async function pickOption(page: Page, selectIndexInDialog: number, optionText: string | RegExp) {
  const select = page.locator('.el-dialog:visible .el-select').nth(selectIndexInDialog)
  const label = typeof optionText === 'string' ? optionText : new RegExp(optionText.source.replace(/^\^/, ''), optionText.flags)
  const shown = async () => (await select.textContent()) ?? ''
  const chosen = async () => (typeof label === 'string' ? (await shown()).includes(label) : label.test(await shown()))
  // a click that lands while the list is still opening can leave the choice as it was: the select is
  // read back, and the pick made again until it shows the option (a user would see it and pick again)
  for (let attempt = 1; !(await chosen()); attempt++) {
    if (attempt > 5) throw new Error(`the select shows '${await shown()}' after 5 picks of ${String(optionText)}`)
    await select.click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: optionText }).first().click()
    // a list left open would cover the dialog's buttons: a click on the dialog's title closes it, as a user would
    await expect.poll(async () => {
      const open = await page.locator('.el-select-dropdown:visible').count()
      if (open) await page.locator('.el-dialog:visible .el-dialog__header').first().click()
      return open
    }, { timeout: 10_000, interval: 200 }).toBe(0)
  }
}

describe('browser: the model library', () => {
  it('starts a model from a template, shows a marker for an unknown name on its line, and publishes version 2', async () => {
    const page = await rig.newPage()
    const requested: string[] = []
    page.on('request', (r) => requested.push(r.url()))
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await poll(() => page.locator('[data-testid="library-table"]').getByText('Heated buffer vessel').count()).toBeGreaterThan(0)
    // the library page does not load the editor, its worker or the plotting library
    expect(requested.filter((u) => lazyChunks.test(u))).toEqual([])

    await page.locator('[data-testid="new-model"]').click()
    await pickOption(page, 0, 'Heated buffer vessel')
    await page.getByLabel('Title').fill('Buffer B-7 (invented)')
    await page.locator('[data-testid="create-model"]').click()
    await page.waitForURL(/\/w\/tinmoor\/library\/\d+$/)
    const modelUrl = page.url()
    await page.locator('.monaco-editor .view-lines').waitFor()
    await poll(() => page.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)
    expect(requested.some((u) => /register\.all/.test(u))).toBe(true)
    await rig.screenshot(page, 'library-editor-clean')

    // type an unknown name into the level equation
    const text = await templateText('Heated buffer vessel')
    const lines = text.split('\n')
    const hLine = lines.findIndex((l) => l.startsWith("dh/dt =")) + 1
    expect(hLine).toBeGreaterThan(1)
    await page.locator('.monaco-editor .view-lines').click()
    await cursorAt(page, hLine)
    await page.keyboard.press('End')
    await page.keyboard.type(' - q_drain')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe(String(hLine))
    await poll(() => page.locator('[data-testid="problems"]').textContent()).toMatch(new RegExp(`line ${hLine}, col \\d+.*unknown name 'q_drain'`))
    await poll(() => page.locator('.monaco-editor .squiggly-error').count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'library-editor-marker')

    // completion offers the declared names and the functions
    await page.keyboard.press('Escape')
    await page.keyboard.type(' + q_')
    await page.keyboard.press('Control+Space')
    await poll(() => page.locator('.monaco-editor .suggest-widget.visible').textContent()).toMatch(/q_in.*q_out|q_out.*q_in/s)
    await page.keyboard.press('Escape')
    await page.keyboard.press('Backspace')
    await page.keyboard.press('Backspace')
    await page.keyboard.type('sq')
    await page.keyboard.press('Control+Space')
    await poll(() => page.locator('.monaco-editor .suggest-widget.visible').textContent()).toMatch(/sqrt/)
    await page.keyboard.press('Escape')
    for (let i = 0; i < ' + sq'.length; i++) await page.keyboard.press('Backspace')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe(String(hLine))

    // fix it: remove the unknown name again
    for (let i = 0; i < ' - q_drain'.length; i++) await page.keyboard.press('Backspace')
    await poll(() => page.locator('.sheet-editor').getAttribute('data-marker-lines')).toBe('')
    await poll(() => page.locator('[data-testid="problem-count"]').textContent()).toMatch(/checks clean/)

    // a real change: the heat-loss coefficient UA from 150 to 180 W/K
    const uaLine = lines.findIndex((l) => /^param\s+UA\s*=/.test(l)) + 1
    const uaCol = lines[uaLine - 1].indexOf('150')
    await cursorAt(page, uaLine)
    for (let i = 0; i < uaCol; i++) await page.keyboard.press('ArrowRight')
    for (let i = 0; i < 3; i++) await page.keyboard.press('Shift+ArrowRight')
    await page.keyboard.type('180')
    await poll(() => page.locator('.sheet-summary').textContent()).toMatch(/UA\s*180/)
    // the draft is autosaved
    await poll(() => page.locator('[data-testid="editor-status"]').textContent()).toMatch(/Draft saved/)

    // hover over a declared name shows its unit and bounds
    await page.locator('.monaco-editor .view-line', { hasText: /^param\s+UA/ }).locator('span.pw-sym-param', { hasText: /^UA$/ }).hover()
    await poll(() => page.locator('.monaco-hover').first().textContent()).toMatch(/UA.*parameter.*\[W\/K\].*value 180 W\/K.*bounds \[1, 5000\]/s)

    // publish version 2 with a note
    await page.locator('[data-testid="publish"]').click()
    await page.locator('textarea[data-testid="publish-note"]').fill('UA raised to 180 W/K after the insulation survey (invented)')
    await page.locator('[data-testid="publish-confirm"]').click()
    await poll(() => page.getByText('Version 2 published.').count()).toBeGreaterThan(0)
    await poll(() => page.locator('.page-header').textContent()).toMatch(/v2/)
    await page.getByRole('tab', { name: /History/ }).click()
    await poll(() => page.locator('.version-history').textContent()).toMatch(/UA raised to 180 W\/K/)

    // the quick simulation runs the shared engine in the browser and plots with Plotly
    await page.getByRole('tab', { name: 'Sheet' }).click()
    await page.locator('[data-testid="open-sim"]').click()
    await page.locator('[data-testid="quick-sim-plot"] .main-svg').first().waitFor({ timeout: 30_000 })
    await poll(() => page.locator('.quick-sim__status').textContent()).toMatch(/\d+ steps/)
    expect(requested.some((u) => /plotly/.test(u))).toBe(true)
    await rig.screenshot(page, 'library-published')

    const id = Number(/\/library\/(\d+)$/.exec(modelUrl)![1])
    const v = await rig.context.database.pool.query('select number, note, text from model_versions where model_id = $1 order by number', [id])
    expect(v.rows.map((r) => r.number)).toEqual([1, 2])
    expect(v.rows[1].text).toMatch(/param\s+UA\s+=\s+180\s/)
    expect(v.rows[1].text).not.toContain('q_drain')
    // the API-made starting point of the later tests is this same text
    expect(withUa180(text)).toBe(v.rows[1].text)
    await page.close()
  }, 240_000)

  it('lets another modeler fork it from version 1 and compare the fork with its origin', async () => {
    const modelUrl = await publishedModel()
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler2)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.goto(modelUrl)
    await page.locator('.monaco-editor .view-lines').waitFor()
    // not a maintainer: no publish button, a hint to fork instead
    expect(await page.locator('[data-testid="publish"]').count()).toBe(0)
    await page.locator('[data-testid="fork"]').click()
    await page.locator('input[data-testid="fork-title"]').fill('Buffer B-7, Wren\'s variant')
    await pickOption(page, 0, /^Version 1:/)
    await page.locator('[data-testid="fork-confirm"]').click()
    await page.waitForURL((u) => /\/library\/\d+$/.test(u.pathname) && u.href !== modelUrl)
    await poll(() => page.locator('.page-header').textContent()).toMatch(/forked from\s*Buffer B-7 \(invented\)\s*v1/)

    await page.locator('[data-testid="compare-origin"]').click()
    await poll(() => page.locator('[data-testid="diff-counts"]').textContent()).toMatch(/\+1 −1 lines/)
    await poll(() => page.locator('[data-testid="parameter-changes"]').textContent()).toMatch(/UA.*changed.*value/s)
    await page.locator('.monaco-diff-editor').first().waitFor()
    await rig.screenshot(page, 'library-fork-compare')

    // the origin lists its fork
    await page.goto(modelUrl)
    await page.getByRole('tab', { name: /Forks \(1\)/ }).click()
    await poll(() => page.locator('[data-testid="forks-table"]').textContent()).toMatch(/Buffer B-7, Wren's variant.*v1/s)
    await page.close()
  }, 180_000)

  it('lets a reviewer approve version 2, and shows the sheet read-only to them', async () => {
    const modelUrl = await publishedModel()
    const page = await rig.newPage()
    await rig.signIn(page, demo.reviewer)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.goto(modelUrl)
    await page.locator('.monaco-editor .view-lines').waitFor()
    expect(await page.locator('[data-testid="publish"]').count()).toBe(0)
    expect(await page.locator('[data-testid="fork"]').count()).toBe(0)
    await poll(() => page.locator('[data-testid="editor-status"]').textContent()).toMatch(/Read only/)
    await page.getByRole('tab', { name: /History/ }).click()
    await page.getByRole('button', { name: 'Approve version 2' }).click()
    // approval asks for an optional comment, kept in the version's history
    await page.locator('.el-dialog:visible textarea').fill('Checked the level equation.')
    await page.locator('.el-dialog:visible').getByRole('button', { name: 'Approve', exact: true }).click()
    await poll(() => page.getByText('Version 2 approved.').count()).toBeGreaterThan(0)
    await poll(() => page.locator('.version-history [data-version="2"] [data-testid="review-history"]').textContent()).toMatch(/Rook Ashby.* approved.*Checked the level equation\./s)
    await poll(() => page.locator('.version-history [data-version="2"]').textContent()).toMatch(/approved.*Approved by Rook Ashby/s)
    const id = Number(/\/library\/(\d+)$/.exec(modelUrl)![1])
    const v = await rig.context.database.pool.query('select status from model_versions where model_id = $1 and number = 2', [id])
    expect(v.rows[0].status).toBe('approved')
    await page.close()
  }, 120_000)

  it('answers a publish on an outdated base with the newer version, and publishes on top of it after review', async () => {
    const modelUrl = await publishedModel()
    const id = Number(/\/library\/(\d+)$/.exec(modelUrl)![1])
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.goto(modelUrl)
    await page.locator('.monaco-editor .view-lines').waitFor()
    await poll(() => page.locator('[data-testid="editor-status"]').textContent()).toMatch(/Editing from version 2/)

    // the modeler changes the feed delay from 20 s to 25 s …
    const v2 = (await rig.context.database.pool.query('select text from model_versions where model_id = $1 and number = 2', [id])).rows[0].text as string
    const lines = v2.split('\n')
    const tauLine = lines.findIndex((l) => /^param\s+tau\s*=/.test(l)) + 1
    await page.locator('.monaco-editor .view-lines').click()
    await cursorAt(page, tauLine)
    for (let i = 0; i < lines[tauLine - 1].indexOf('20'); i++) await page.keyboard.press('ArrowRight')
    await page.keyboard.press('Shift+ArrowRight')
    await page.keyboard.press('Shift+ArrowRight')
    await page.keyboard.type('25')
    await poll(() => page.locator('.sheet-summary').textContent()).toMatch(/tau\s*25/)

    // … while an admin publishes version 3 from another browser
    const admin = await rig.newPage()
    await rig.signIn(admin, demo.admin)
    await admin.waitForURL(/\/w\/tinmoor\/library/)
    const status = await admin.evaluate(async ([url, text]) => {
      const r = await fetch(url, { method: 'POST', headers: { 'Content-Type': 'application/json', 'X-Requested-With': 'pewter' }, body: JSON.stringify({ text, note: 'Admin: larger vessel cross-section (invented)', baseVersion: 2 }) })
      return r.status
    }, [`/api/workspaces/tinmoor/models/${id}/versions`, v2.replace(/param\s+A\s+=\s+1\.2/, (m) => m.replace('1.2', '1.5'))] as const)
    expect(status).toBe(201)
    await admin.close()

    await page.locator('[data-testid="publish"]').click()
    await page.locator('textarea[data-testid="publish-note"]').fill('Feed delay 25 s after the pipe re-routing (invented)')
    await page.locator('[data-testid="publish-confirm"]').click()
    // 409: the dialog names the newer version and shows it beside the modeler's text
    await poll(() => page.locator('.el-dialog:visible').textContent()).toMatch(/Version 3 by Ada Tinmoor \(admin\).*larger vessel cross-section/s)
    await page.locator('.el-dialog:visible .monaco-diff-editor').waitFor()
    await page.locator('.el-dialog:visible').getByRole('button', { name: 'Publish on top of version 3' }).click()
    await poll(() => page.getByText('Version 4 published.').count()).toBeGreaterThan(0)

    const rows = (await rig.context.database.pool.query('select number, note, text from model_versions where model_id = $1 order by number', [id])).rows
    expect(rows.map((r) => r.number)).toEqual([1, 2, 3, 4])
    expect(rows[2].note).toBe('Admin: larger vessel cross-section (invented)')
    expect(rows[3].text).toMatch(/param\s+tau\s+=\s+25\s/)
    await page.close()
  }, 180_000)
})
