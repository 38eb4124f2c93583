import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'

let rig: BrowserRig
beforeAll(async () => { rig = await startBrowserRig('e2e_foundation') })
afterAll(async () => { await rig?.close() })

describe('browser: the client shell', () => {
  it('sends an anonymous visitor to sign-in and the demo modeler on to the Library page', async () => {
    const page = await rig.newPage()
    await page.goto(`${rig.baseUrl}/w/tinmoor/library`)
    await page.waitForURL(/\/signin/)
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await expect.poll(() => page.getByRole('heading', { level: 1, name: 'Library' }).count()).toBeGreaterThan(0)
    // the application font is the bundled Fira Sans, not a remote one
    const font = String(await page.evaluate('getComputedStyle(document.body).fontFamily'))
    expect(font).toMatch(/Fira Sans/)
    await rig.screenshot(page, 'foundation-library')
    await page.close()
  })

  it('shows the 404 page for an unknown address', async () => {
    const page = await rig.newPage()
    await rig.signIn(page, demo.viewer)
    await page.waitForURL(/\/w\/tinmoor/)
    await page.goto(`${rig.baseUrl}/no/such/page`)
    await expect.poll(() => page.getByText(/not found|404/i).count(), { timeout: 20_000 }).toBeGreaterThan(0)
    await page.close()
  })
})
