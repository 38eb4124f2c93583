/**
 * Browser: a tour of every page of the router with the demo workspace seeded (the invented Tinmoor
 * Works plant; its demo project's traces are seeded synthetic data), at 1440×900 and at phone width
 * 390×844. Each page loads with no console error and no page error, does not scroll sideways at 390 px,
 * keeps its navigation reachable there (the folded rail opens; elsewhere every link and button lies
 * inside the window), and leaves a full-page screenshot `<page>-1440.png` / `<page>-390.png` in
 * test-artifacts/. One browser; one page per identity, signed in once.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import request from 'supertest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { CSRF, demo } from '../helpers/app'
import { capturedMail, mailTo } from '../helpers/signup'
import { legendOverlaps, overflowing } from '../helpers/layout'
import { DEMO_PASSWORD } from '../../server/db/seed'
import { seedDemoProject } from '../../server/services/demo-project'

const WS = `/api/workspaces/${demo.ws}`
const DESKTOP = { width: 1440, height: 900 }
const PHONE = { width: 390, height: 844 }
const poll = <T>(fn: () => Promise<T> | T, timeout = 30_000) => expect.poll(fn, { timeout, interval: 150 })

let rig: BrowserRig
const ids = { model: 0, project: 0, dataset: 0, run: 0, evaluation: 0 }
const links = { reset: '', verify: '', invitation: '' }
const LONELY = { email: 'lone.walker@example.org', password: 'long-enough-tour-1', name: 'Lone Walker' }

/** The path of the first link to this server in a captured message. */
const linkPath = (text: string, route: string) => {
  const hit = new RegExp(`http\\S+(/${route}/\\S+)`).exec(text)
  if (!hit) throw new Error(`no /${route}/ link in:\n${text}`)
  return hit[1]
}

beforeAll(async () => {
  rig = await startBrowserRig('e2e_tour')
  await seedDemoProject(rig.context.db)
  const q = async (sql: string, params: unknown[] = []) => (await rig.context.database.pool.query(sql, params)).rows[0] as Record<string, number>
  const run = await q("select id, project_id, model_id, model_version from runs where status = 'succeeded' order by id limit 1")
  ids.run = run.id
  ids.project = run.project_id
  ids.model = run.model_id
  ids.dataset = (await q("select id from datasets where project_id = $1 and name = 'b2-step-test-estimation'", [ids.project])).id
  const validation = (await q("select id from datasets where project_id = $1 and name = 'b2-shift-validation'", [ids.project])).id
  const binding = (await q('select id from bindings where project_id = $1 order by id limit 1', [ids.project])).id

  const mail = capturedMail(rig.context)
  const admin = request.agent(rig.baseUrl)
  expect((await admin.post('/api/auth/signin').set(CSRF).send({ email: demo.admin, password: DEMO_PASSWORD })).status).toBe(200)
  // an evaluation of the demo fit on the record it never saw: the compare page's second run
  const ev = await admin.post(`${WS}/projects/${ids.project}/evaluations`).set(CSRF)
    .send({ modelId: ids.model, version: run.model_version, bindingId: binding, datasets: [validation], sourceRunId: ids.run })
  expect(ev.status, JSON.stringify(ev.body)).toBe(201)
  ids.evaluation = ev.body.id

  // the pages reached from mailed links, with live tokens
  let after = mail.length
  expect((await admin.post(`${WS}/invitations`).set(CSRF).send({ email: 'tour.invitee@example.org', role: 'modeler' })).status).toBe(201)
  links.invitation = linkPath((await mailTo(rig.context, 'tour.invitee@example.org', /./, after)).text, 'invitations')
  after = mail.length
  const visitor = request.agent(rig.baseUrl)
  expect((await visitor.post('/api/auth/password-reset').set(CSRF).send({ email: demo.viewer })).status).toBe(202)
  links.reset = linkPath((await mailTo(rig.context, demo.viewer, /./, after)).text, 'reset-password')
  after = mail.length
  expect((await visitor.post('/api/auth/signup').set(CSRF).send({ email: 'tour.signup@example.org', password: 'long-enough-tour-2', name: 'Tour Signup' })).status).toBe(202)
  links.verify = linkPath((await mailTo(rig.context, 'tour.signup@example.org', /Confirm your e-mail/, after)).text, 'verify-email')

  // an account without a workspace: signed up, then its own workspace removed
  after = mail.length
  const lone = request.agent(rig.baseUrl)
  expect((await lone.post('/api/auth/signup').set(CSRF).send(LONELY)).status).toBe(202)
  const token = linkPath((await mailTo(rig.context, LONELY.email, /Confirm your e-mail/, after)).text, 'verify-email').split('/').pop()
  expect((await lone.post(`/api/auth/verify-email/${token}`).set(CSRF).send({ password: LONELY.password })).status).toBe(200)
  await rig.context.database.pool.query('delete from workspaces where id in (select workspace_id from memberships m join users u on u.id = m.user_id where u.email = $1)', [LONELY.email])
  await rig.context.database.pool.query('update users set current_workspace_id = null where email = $1', [LONELY.email])

  for (let i = 0; ; i++) {
    const s = await admin.get(`${WS}/runs/${ids.evaluation}`)
    if (s.body.status === 'succeeded') break
    if (['failed', 'cancelled'].includes(s.body.status) || i > 1200) throw new Error(`evaluation ${ids.evaluation}: ${s.body.status} ${s.body.error}`)
    await new Promise((r) => setTimeout(r, 100))
  }
}, 300_000)
afterAll(async () => { await rig?.close() })

/** One page of the tour: its address, the tabs to visit in turn, and what shows when it is ready. */
interface Stop {
  name: string
  path: () => string
  /** tab labels (Element Plus tabs) visited in turn; each gets its own screenshot `<name>-<tab>-…` */
  tabs?: [string, RegExp][]
  /** a selector that is there once the page's content is (beyond the h1) */
  ready?: string
  /** inside the workspace layout (the rail folds behind a menu button on a phone) */
  shell?: boolean
}

const w = (rest: string) => `/w/${demo.ws}/${rest}`
const signedOut: Stop[] = [
  { name: 'signin', path: () => '/signin', ready: 'form' },
  { name: 'signup', path: () => '/signup', ready: 'form' },
  { name: 'forgot-password', path: () => '/forgot-password', ready: 'form' },
  { name: 'reset-password', path: () => links.reset, ready: 'form' },
  { name: 'verify-email', path: () => links.verify, ready: 'form' },
  { name: 'accept-invitation', path: () => links.invitation, ready: 'form' },
  { name: 'not-found-signed-out', path: () => '/no/such/page' },
]
const workspacePages: Stop[] = ([
  { name: 'library', path: () => w('library') },
  {
    name: 'model', path: () => w(`library/${ids.model}`), ready: '.monaco-editor',
    tabs: [['sheet', /^Sheet$/], ['history', /^History/], ['compare', /^Compare$/], ['handover', /^Hand-over/], ['forks', /^Forks/], ['used-in', /^Used in/]],
  },
  { name: 'reference', path: () => w('reference'), ready: '[data-testid="reference-section"]' },
  { name: 'reviews', path: () => w('reviews') },
  { name: 'projects', path: () => w('projects') },
  {
    name: 'project', path: () => w(`projects/${ids.project}`), ready: '[data-testid="datasets-table"]',
    tabs: [['datasets', /^Datasets/], ['bindings', /^Bindings/], ['runs', /^Fit runs/]],
  },
  { name: 'data', path: () => w('data') },
  { name: 'dataset', path: () => w(`data/${ids.dataset}`), ready: '.js-plotly-plot' },
  { name: 'runs', path: () => w('runs'), ready: '[data-testid="validation-figure"]' },
  { name: 'run', path: () => w(`runs/${ids.run}`), ready: '[data-testid="verdict-table"]' },
  { name: 'run-evaluation', path: () => w(`runs/${ids.evaluation}`), ready: '[data-testid="evaluation-summary"]' },
  { name: 'run-report', path: () => w(`runs/${ids.run}/report`), ready: '[data-testid="verdict-table"]' },
  { name: 'run-compare', path: () => w(`runs/compare?a=${ids.run}&b=${ids.evaluation}`), ready: '[data-testid="compare-versions"]' },
  { name: 'team', path: () => w('team'), ready: '[data-testid="invitations"]' },
  { name: 'mailbox', path: () => w('mailbox') },
  { name: 'not-found-signed-in', path: () => w('no-such-page') },
] as Stop[]).map((s) => ({ ...s, shell: s.name !== 'run-report' && !s.name.startsWith('not-found') }))

/** Collects console errors and page errors of a page; `take` hands them over and starts afresh. */
function watchErrors(page: Page) {
  let errors: string[] = []
  page.on('console', (m) => { if (m.type() === 'error') errors.push(`console: ${m.text()}`) })
  page.on('pageerror', (e) => errors.push(`page error: ${e.message}`))
  return { take: () => { const e = errors; errors = []; return e } }
}

/**
 * Visible links and buttons lying (partly) outside the window's width, and how many are visible. A
 * control inside a box that scrolls or clips sideways (a wide table's own scroll) is reached by
 * scrolling that box, so only the others count.
 */
const outsideControls = (page: Page) => page.evaluate(`(() => {
  const w = window.innerWidth
  const visible = [...document.querySelectorAll('a[href], button')].filter((el) => {
    const r = el.getBoundingClientRect()
    return r.width > 0 && r.height > 0 && getComputedStyle(el).visibility !== 'hidden'
  })
  const inScroller = (el) => {
    for (let p = el.parentElement; p && p !== document.body; p = p.parentElement) if (getComputedStyle(p).overflowX !== 'visible') return true
    return false
  }
  const outside = visible.filter((el) => { const r = el.getBoundingClientRect(); return (r.left < -1 || r.right > w + 1) && !inScroller(el) })
    .map((el) => (el.textContent || el.getAttribute('aria-label') || el.tagName).trim().slice(0, 40))
  return { visible: visible.length, outside }
})()`) as Promise<{ visible: number; outside: string[] }>

/** Waits for the page's content: the h1, no skeleton, every Plotly chart drawn, the network quiet. */
async function settle(page: Page, stop: Stop) {
  await page.waitForLoadState('networkidle')
  await poll(() => page.locator('h1').count()).toBeGreaterThan(0)
  await poll(() => page.locator('[data-testid="load-loading"]').count()).toBe(0)
  if (stop.ready) await page.locator(stop.ready).first().waitFor({ state: 'attached', timeout: 60_000 })
  await poll(() => page.locator('.plotly-chart__loading').count(), 60_000).toBe(0)
  expect(await page.locator('[data-testid="load-error"], [data-testid="not-found"]').count(), `${stop.name}: the load failed`).toBe(0)
}

/** The checks at one window size, then the screenshot. */
async function check(page: Page, stop: Stop, shot: string, phone: boolean, errors: { take: () => string[] }) {
  await settle(page, stop)
  if (phone) {
    // Element Plus tables and Plotly lay themselves out again after a resize: poll
    await poll(() => overflowing(page), 15_000).toEqual([])
    if (stop.shell) {
      const toggle = page.getByTestId('nav-toggle')
      const nav = page.locator('#app-shell-nav')
      expect(await toggle.isVisible(), `${shot}: menu button`).toBe(true)
      expect(await nav.isVisible(), `${shot}: the rail is folded`).toBe(false)
      await toggle.click()
      await nav.waitFor({ state: 'visible' })
      expect(await nav.getByRole('link').count()).toBeGreaterThanOrEqual(5)
      expect((await outsideControls(page)).outside, `${shot}: links outside the window with the menu open`).toEqual([])
      await toggle.click()
      await nav.waitFor({ state: 'hidden' })
    }
  }
  // no legend over a plotting area or a title (Plotly places the legends when it draws)
  await expect.poll(async () => (await legendOverlaps(page)).found, { timeout: 10_000, interval: 250, message: `${shot}: legends` }).toEqual([])
  const controls = await outsideControls(page)
  expect(controls.visible, `${shot}: a way on`).toBeGreaterThan(0)
  if (phone) expect(controls.outside, `${shot}: links or buttons outside the window`).toEqual([])
  await rig.screenshot(page, shot)
  expect(errors.take(), shot).toEqual([])
}

/** A stop at both sizes: loaded afresh at each, every tab visited. */
async function tour(page: Page, stop: Stop, errors: { take: () => string[] }) {
  for (const [size, viewport] of [['1440', DESKTOP], ['390', PHONE]] as const) {
    await page.setViewportSize(viewport)
    await page.goto(`${rig.baseUrl}${stop.path()}`)
    const phone = viewport === PHONE
    if (!stop.tabs) { await check(page, stop, `${stop.name}-${size}`, phone, errors); continue }
    for (const [tab, label] of stop.tabs) {
      await page.getByRole('tab', { name: label }).click()
      await poll(() => page.getByRole('tab', { name: label }).getAttribute('aria-selected')).toBe('true')
      await check(page, stop, `${stop.name}-${tab}-${size}`, phone, errors)
    }
  }
}

describe('browser: a tour of every page at 1440 and 390 px', () => {
  it('signed out: sign-in, sign-up, password reset, e-mail confirmation, invitation, 404', async () => {
    const page = await rig.newPage()
    const errors = watchErrors(page)
    for (const stop of signedOut) await tour(page, stop, errors)
    await page.close()
  }, 120_000)

  it('in the demo workspace: every section, the model tabs, the project tabs, run, report, compare, team, mailbox, 404', async () => {
    const page = await rig.newPage()
    const errors = watchErrors(page)
    await rig.signIn(page, demo.admin)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.waitForLoadState('networkidle')
    errors.take()
    for (const stop of workspacePages) await tour(page, stop, errors)
    await page.close()
  }, 600_000)

  it('an account without a workspace', async () => {
    const page = await rig.newPage()
    const errors = watchErrors(page)
    await rig.signIn(page, LONELY.email, LONELY.password)
    await page.waitForURL((u) => u.pathname === '/')
    await tour(page, { name: 'no-workspace', path: () => '/' }, errors)
    await expect(page.getByRole('heading', { name: 'No workspace yet' }).count()).resolves.toBe(1)
    await page.close()
  }, 60_000)
})
