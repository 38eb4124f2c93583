/**
 * Browser: the newcomer's path and light, phone-friendly pages. Signed-out pages log no console error;
 * a new account's library holds the shipped templates (read-only); the empty Projects page offers
 * "Try it on example data" (invented Tinmoor Works traces) which opens the first fit; the sheet editor
 * links the searchable language reference; at phone width (390 px) no main page scrolls sideways and
 * the folded navigation opens. Screenshots at 1440 and 390 px go to test-artifacts/.
 * Needs dist/ (`npx vite build`).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { capturedMail, mailTo } from '../helpers/signup'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_newcomer') })
afterAll(async () => { await rig?.close() })

const poll = <T>(fn: () => Promise<T> | T) => expect.poll(fn, { timeout: 30_000, interval: 150 })
const PHONE = { width: 390, height: 844 }
const DESKTOP = { width: 1440, height: 900 }

async function pageAt(viewport: { width: number; height: number }): Promise<Page> {
  const page = await rig.browser.newPage({ viewport })
  page.setDefaultTimeout(30_000)
  return page
}

/** Widest content minus the viewport: > 0 means the page scrolls sideways. */
const sideways = async (page: Page) => Number(await page.evaluate('document.documentElement.scrollWidth - window.innerWidth'))

/** The outermost elements reaching past the right edge (for the failure message). */
const offenders = (page: Page) => page.evaluate(`(() => {
  const w = window.innerWidth
  const out = []
  for (const el of Array.from(document.querySelectorAll('body *'))) {
    const r = el.getBoundingClientRect()
    const parent = el.parentElement ? el.parentElement.getBoundingClientRect() : null
    if (r.right > w + 1 && (!parent || parent.right <= w + 1)) out.push(el.tagName.toLowerCase() + '.' + String(el.className).split(' ').slice(0, 2).join('.') + ' right=' + Math.round(r.right))
  }
  return out.slice(0, 8).join('; ')
})()`)

async function signInOn(page: Page, email: string) {
  await page.goto(`${rig.baseUrl}/signin`)
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password').fill('pewter-demo')
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL(/\/w\//)
}

describe('browser: signed-out pages', () => {
  it('log no console error (the session question answers 200)', async () => {
    for (const [name, path] of [['signin', '/signin'], ['signup', '/signup'], ['forgot-password', '/forgot-password'], ['reset-password', '/reset-password/not-a-real-token']] as const) {
      for (const [size, viewport] of [['1440', DESKTOP], ['390', PHONE]] as const) {
        const page = await pageAt(viewport)
        const errors: string[] = []
        page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()) })
        page.on('pageerror', (e) => errors.push(String(e)))
        await page.goto(`${rig.baseUrl}${path}`)
        await page.waitForLoadState('networkidle')
        await poll(() => page.locator('form').count()).toBeGreaterThan(0)
        expect(errors, `${path} at ${size} px`).toEqual([])
        expect(await sideways(page), `${path} scrolls sideways at ${size} px: ${await offenders(page)}`).toBeLessThanOrEqual(0)
        await rig.screenshot(page, `newcomer-${name}-${size}`)
        await page.close()
      }
    }
  }, 240_000)
})

describe('browser: first steps', () => {
  it('a new account finds the templates, the language reference and the example project', async () => {
    const page = await pageAt(DESKTOP)
    await page.goto(`${rig.baseUrl}/signup`)
    await page.getByLabel('Name').fill('Nia Newcomer')
    await page.getByLabel('E-mail').fill('nia.newcomer@example.org')
    await page.getByLabel('Password').fill('long-enough-password-1')
    const after = capturedMail(rig.context).length
    await page.getByRole('button', { name: 'Create account' }).click()
    // sign-up by the mailed link, with the password chosen at sign-up
    await poll(() => page.locator('[data-testid="signup-sent"]').count()).toBeGreaterThan(0)
    const mail = await mailTo(rig.context, 'nia.newcomer@example.org', /Confirm your e-mail/, after)
    await page.goto(/http\S+\/verify-email\/\S+/.exec(mail.text)![0])
    await page.getByLabel('Password').fill('long-enough-password-1')
    await page.getByRole('button', { name: 'Confirm and create the account' }).click()
    await page.waitForURL(/\/w\/[^/]+\/library/)
    // the shipped templates are in the new workspace's library
    await poll(() => page.getByText('Heated buffer vessel').count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'newcomer-library-1440')
    await page.getByText('Heated buffer vessel').first().click()
    await page.waitForURL(/\/library\/\d+/)
    await poll(() => page.locator('[data-testid="template-note"]').count()).toBe(1)
    expect(await page.locator('[data-testid="publish"]').count()).toBe(0)
    // the language reference sits beside the editor and is searchable
    const href = await page.locator('[data-testid="language-reference"]').getAttribute('href')
    expect(href).toMatch(/\/w\/[^/]+\/reference$/)
    await rig.screenshot(page, 'newcomer-template-1440')
    await page.goto(`${rig.baseUrl}${href}`)
    await poll(() => page.locator('[data-testid="reference-section"]').count()).toBeGreaterThan(5)
    const all = await page.locator('[data-testid="reference-section"]').count()
    await page.getByRole('textbox', { name: 'Search the reference' }).fill('soft_clamp')
    await poll(() => page.locator('[data-testid="reference-section"]').count()).toBeLessThan(all)
    await poll(() => page.getByText('soft_clamp(x, lo, hi, width)').count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'newcomer-reference-1440')
    // an empty workspace offers the example; it opens the first fit on invented data
    const ws = new URL(page.url()).pathname.split('/')[2]
    await page.goto(`${rig.baseUrl}/w/${ws}/projects`)
    await poll(() => page.locator('[data-testid="try-example"]').count()).toBe(1)
    await poll(() => page.getByText(/invented/).count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'newcomer-projects-empty-1440')
    await page.locator('[data-testid="try-example"]').click()
    await page.waitForURL(/\/runs\/\d+/)
    await poll(() => page.getByText('B2 first calibration (demo)').count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'newcomer-example-run-1440')
    await page.close()
  }, 240_000)
})

describe('browser: phone width (390 px)', () => {
  it('no main page scrolls sideways, and the folded navigation opens', async () => {
    const page = await pageAt(PHONE)
    await signInOn(page, demo.modeler)
    const ws = demo.ws
    const modelId = (await rig.context.database.pool.query("select m.id from models m join workspaces w on w.id = m.workspace_id where w.slug = $1 and m.template = 'heated-buffer-vessel.sheet'", [ws])).rows[0].id as number
    const pages: [string, string][] = [
      ['library', `/w/${ws}/library`], ['model', `/w/${ws}/library/${modelId}`], ['reference', `/w/${ws}/reference`],
      ['projects', `/w/${ws}/projects`], ['data', `/w/${ws}/data`], ['runs', `/w/${ws}/runs`], ['team', `/w/${ws}/team`],
    ]
    for (const [name, path] of pages) {
      await page.goto(`${rig.baseUrl}${path}`)
      await page.waitForLoadState('networkidle')
      await poll(() => page.locator('h1').count()).toBeGreaterThan(0)
      if (name === 'model') await poll(() => page.locator('.monaco-editor').count()).toBeGreaterThan(0)
      expect(await sideways(page), `${path} scrolls sideways: ${await offenders(page)}`).toBeLessThanOrEqual(0)
      await rig.screenshot(page, `newcomer-${name}-390`)
    }
    // the navigation is folded behind the menu button, and opens
    const nav = page.locator('#app-shell-nav')
    expect(await nav.isVisible()).toBe(false)
    await page.locator('[data-testid="nav-toggle"]').click()
    expect(await nav.isVisible()).toBe(true)
    await rig.screenshot(page, 'newcomer-nav-open-390')
    await nav.getByText('Projects').click()
    await page.waitForURL(/\/projects$/)
    expect(await nav.isVisible()).toBe(false)
    await page.close()
  }, 240_000)
})
