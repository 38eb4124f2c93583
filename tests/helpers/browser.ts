/**
 * Browser tests: the built client (dist/, made by `npm test` before vitest runs, or `npx vite build`)
 * served by a real Pewter server on a free loopback port with a fresh database, driven by
 * playwright-core through Debian's Chromium (/usr/bin/chromium). Never downloads a browser.
 */
import { existsSync, mkdirSync } from 'node:fs'
import path from 'node:path'
import type { Server } from 'node:http'
import { chromium, type Browser, type Page } from 'playwright-core'
import { createApp, distFolder } from '../../server/app'
import { createContext } from '../../server/bootstrap'
import type { AppContext } from '../../server/context'
import { freshDatabaseUrl } from './db'
import { DEMO_PASSWORD } from '../../server/db/seed'

export const ARTIFACTS = path.resolve('test-artifacts')

export interface BrowserRig {
  baseUrl: string
  browser: Browser
  context: AppContext
  newPage: () => Promise<Page>
  signIn: (page: Page, email: string, password?: string) => Promise<void>
  /** the whole page by default; `viewport` keeps the window as it is (a full-page shot resizes it, which closes open editor menus) */
  screenshot: (page: Page, name: string, opts?: { viewport?: boolean }) => Promise<string>
  close: () => Promise<void>
}

export async function startBrowserRig(tag: string): Promise<BrowserRig> {
  if (!existsSync(path.join(distFolder, 'index.html'))) throw new Error('dist/ is missing: run `npx vite build` (npm test does) before the browser tests')
  const databaseUrl = await freshDatabaseUrl(tag)
  const context = await createContext({ databaseUrl, rateLimitAuth: 10_000 })
  const app = createApp(context, { serveClient: true })
  const server: Server = await new Promise((resolve) => { const s = app.listen(0, '127.0.0.1', () => resolve(s)) })
  const addr = server.address()
  const port = typeof addr === 'object' && addr ? addr.port : 0
  const baseUrl = `http://127.0.0.1:${port}`
  context.config.publicUrl = baseUrl
  const browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
  })
  mkdirSync(ARTIFACTS, { recursive: true })
  return {
    baseUrl,
    browser,
    context,
    newPage: async () => {
      const page = await browser.newPage({ viewport: { width: 1400, height: 900 } })
      page.setDefaultTimeout(20_000)
      return page
    },
    signIn: async (page, email, password = DEMO_PASSWORD) => {
      await page.goto(`${baseUrl}/signin`)
      await page.getByLabel('E-mail').fill(email)
      await page.getByLabel('Password').fill(password)
      await page.getByRole('button', { name: 'Sign in' }).click()
    },
    screenshot: async (page, name, opts) => {
      const file = path.join(ARTIFACTS, `${name}.png`)
      await page.screenshot({ path: file, fullPage: !opts?.viewport })
      return file
    },
    close: async () => {
      await browser.close()
      await new Promise<void>((r) => server.close(() => r()))
      await context.database.close()
    },
  }
}
