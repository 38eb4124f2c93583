/// <reference lib="dom" />
/**
 * Browser: the client's data layer, forms and fit progress. A missing run shows "not found" with a way
 * back, and moving from one run address to another reloads; the compare page keeps both slots for one
 * run given twice and states a missing run of its pair; the new-project form highlights the field
 * its rule refuses before anything is sent; the fit form places the server's refusal on the row it
 * names, in words and once; a running fit draws its live cost curve and current estimates, and a cancel
 * asks first and keeps the best finished start; the quick simulation runs in a Web Worker. The demo
 * project's traces are seeded synthetic data of the invented Tinmoor Works plant. Needs dist/.
 */
import { seededDemoProject } from '../helpers/demo-project'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'

let rig: BrowserRig
let pid: number
let rid: number
beforeAll(async () => {
  rig = await startBrowserRig('e2e_data_layer')
  const seeded = await seededDemoProject(rig.context.db)
  pid = seeded.project.id
  rid = seeded.run.id
}, 180_000)
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T, timeout = 30_000) => expect.poll(fn, { timeout, interval: 150 })

async function signedIn(): Promise<Page> {
  const page = await rig.newPage()
  await rig.signIn(page, demo.modeler)
  await page.waitForURL(/\/w\/tinmoor\//)
  return page
}

/** Client-side navigation (the router reuses the view, as a link between two runs would). */
const navigate = (page: Page, path: string) => page.evaluate(`history.pushState({}, '', ${JSON.stringify(path)}); dispatchEvent(new PopStateEvent('popstate'))`)

describe('browser: data layer, forms, progress', () => {
  it('shows a missing run as not found with a way back, and reloads when the run address changes', async () => {
    const page = await signedIn()
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/999999`)
    await poll(() => page.getByTestId('not-found').textContent()).toMatch(/Not found: run #999999/)
    expect(await page.locator('.el-message--error').count()).toBe(0) // a 404 is the page's own state, not an error message
    await rig.screenshot(page, 'data-layer-run-not-found')
    // the same view, another run: it loads that run
    await navigate(page, `/w/tinmoor/runs/${rid}`)
    await poll(() => page.getByTestId('run-summary').count()).toBe(1)
    expect(await page.getByTestId('not-found').count()).toBe(0)
    await navigate(page, '/w/tinmoor/runs/999998')
    await poll(() => page.getByTestId('not-found').textContent()).toMatch(/run #999998/)
    await page.getByTestId('not-found-back').click()
    await page.waitForURL(/\/w\/tinmoor\/runs$/)
    await poll(() => page.getByRole('link', { name: new RegExp(`#${rid} `) }).count()).toBeGreaterThan(0)
  }, 120_000)

  it('compares a run with itself in both slots, shows a missing run of a pair as not found, and reloads another pair', async () => {
    const page = await signedIn()
    await page.goto(`${rig.baseUrl}/w/tinmoor/runs/compare?a=${rid}&b=${rid}`)
    await poll(() => page.getByTestId('parameter-table').count()).toBe(2)
    await expect(page.locator('[data-testid="compare-settings"] thead th a').allTextContents()).resolves.toHaveLength(2)
    await navigate(page, `/w/tinmoor/runs/compare?a=${rid}&b=999999`)
    await poll(() => page.getByTestId('not-found').textContent()).toMatch(new RegExp(`Not found: run #${rid} or #999999`))
    expect(await page.locator('.el-message--error').count()).toBe(0)
    await navigate(page, `/w/tinmoor/runs/compare?a=${rid}&b=${rid}`)
    await poll(() => page.getByTestId('parameter-table').count()).toBe(2)
    await navigate(page, `/w/tinmoor/runs/compare?a=${rid}`)
    await poll(() => page.getByTestId('compare-needs-two').count()).toBe(1)
    await rig.screenshot(page, 'data-layer-compare-needs-two')
  }, 120_000)

  it('highlights a refused field before sending, and places the server\'s refusal on its row in words, once', async () => {
    const page = await signedIn()
    await page.goto(`${rig.baseUrl}/w/tinmoor/projects`)
    await page.getByRole('button', { name: 'New project' }).click()
    const posts: string[] = []
    page.on('request', (r) => { if (r.method() === 'POST' && r.url().endsWith('/projects')) posts.push(r.url()) })
    await page.getByTestId('create-project').click()
    const nameItem = page.getByTestId('project-form').locator('.el-form-item').first()
    await poll(() => nameItem.getAttribute('class')).toMatch(/is-error/)
    await expect(nameItem.locator('.el-form-item__error').textContent()).resolves.toMatch(/a project needs a name/)
    expect(posts).toEqual([])
    await rig.screenshot(page, 'data-layer-project-form-error')

    // the fit form: a start outside its bounds is refused by the server (400, path body.free.0.start)
    await page.goto(`${rig.baseUrl}/w/tinmoor/projects/${pid}?tab=runs`)
    await page.getByRole('button', { name: 'New fit' }).click()
    await page.getByTestId('free-parameters').getByText('Cv').waitFor()
    const start = page.getByLabel('start Cv', { exact: true })
    await start.fill('5')
    await start.blur()
    await page.getByRole('button', { name: 'Start fit' }).click()
    const problems = page.getByTestId('free-problems')
    await poll(() => problems.textContent()).toMatch(/free parameters, row 1 \(Cv\), start: 'Cv': the start 5 lies outside its bounds/)
    expect(await problems.textContent()).not.toMatch(/body\.|free\.0/)
    expect(await page.locator('.el-message--error').count()).toBe(0) // shown once: beside the table, no message box
    expect(await page.locator('.run-form__bad').count()).toBe(1) // the start field of that row is marked
    await rig.screenshot(page, 'data-layer-fit-form-error')
  }, 120_000)

  it('draws the live cost curve and current estimates of a running fit; cancel asks and keeps the best finished start', async () => {
    const page = await signedIn()
    await page.goto(`${rig.baseUrl}/w/tinmoor/projects/${pid}?tab=runs`)
    await page.getByRole('button', { name: 'New fit' }).click()
    await page.getByTestId('free-parameters').getByText('Cv').waitFor()
    // Nelder–Mead over 64 starts keeps the fit busy long enough to watch it and cancel it
    await page.getByLabel('Method', { exact: true }).first().click({ force: true })
    await page.locator('.el-select-dropdown:visible .el-select-dropdown__item').filter({ hasText: 'Nelder–Mead simplex' }).first().click()
    const starts = page.getByLabel('Starts', { exact: true })
    await starts.fill('64')
    await starts.blur()
    await page.getByRole('button', { name: 'Start fit' }).click()
    await page.waitForURL(/\/runs\/\d+$/)
    await poll(() => page.locator('[data-testid="live-estimates"] tbody tr').count(), 120_000).toBe(4)
    await expect(page.getByTestId('live-estimates').textContent()).resolves.toMatch(/Cv.*m\^2\.5\/s/s)
    // let a few starts finish with an estimate (the progress line counts them; the curve is drawn by then),
    // then cancel: the dialog asks first
    await poll(() => page.getByTestId('run-progress').textContent(), 120_000).toMatch(/\(([2-9]|[1-6]\d) finished\)/)
    await poll(() => page.locator('[data-testid="live-cost-curve"] .main-svg').count(), 30_000).toBeGreaterThan(0)
    await page.getByTestId('cancel-run').click()
    await page.locator('.el-message-box').getByText(/The best result of the starts that have finished is kept/).waitFor()
    await page.getByRole('button', { name: 'Stop the fit' }).click()
    await poll(() => page.getByTestId('run-cancelled').textContent(), 60_000).toMatch(/^Cancelled by request after \d+ of 64 starts: the result shown is the best of the finished starts/)
    await page.getByTestId('parameter-table').waitFor()
    // the kept result's plots are drawn before the page is photographed
    await poll(() => page.locator('[data-testid="plot"] .main-svg').count(), 60_000).toBeGreaterThan(0)
    await page.waitForLoadState('networkidle')
    await rig.screenshot(page, 'data-layer-cancelled-kept')
  }, 300_000)

  it('runs the quick simulation in a Web Worker', async () => {
    const page = await signedIn()
    const r = await rig.context.database.pool.query("select m.id from models m where m.title = 'Heated buffer vessel' order by m.id limit 1")
    const workers: string[] = []
    page.on('worker', (w) => workers.push(w.url()))
    await page.goto(`${rig.baseUrl}/w/tinmoor/library/${r.rows[0].id as number}`)
    await page.locator('[data-testid="open-sim"]').click()
    await poll(() => page.locator('[data-testid="quick-sim-plot"] .main-svg').count(), 60_000).toBeGreaterThan(0)
    expect(workers.some((u) => /quickSimulation\.worker/.test(u))).toBe(true)
    await expect(page.locator('.quick-sim__status').textContent()).resolves.toMatch(/steps/)
    await rig.screenshot(page, 'data-layer-quick-simulation-worker')
  }, 120_000)
})
