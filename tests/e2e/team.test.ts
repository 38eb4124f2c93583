/**
 * Browser: sign-up → "check your mail" → the mailed link and the password create the account, whose
 * own captured mail shows the message; the Team page invites (the admin's mailbox does not show the
 * invitee's message), the invitation link creates the account; the password-reset pages work through
 * the local fake SMTP; an API token is shown once.
 * Screenshots go to test-artifacts/.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { desc, eq } from 'drizzle-orm'
import { startBrowserRig, type BrowserRig } from '../helpers/browser'
import { demo } from '../helpers/app'
import { startFakeSmtp, type FakeSmtp } from '../../server/mail/fake-smtp'
import { createMailer } from '../../server/mail/mailer'
import { mailbox } from '../../server/db/schema'
import { waitFor } from '../helpers/jobs'

let rig: BrowserRig
let smtp: FakeSmtp
beforeAll(async () => {
  rig = await startBrowserRig('e2e_team')
  smtp = await startFakeSmtp({ databaseUrl: rig.context.config.databaseUrl, port: 0 })
  rig.context.services.mailer = createMailer({ ...rig.context.config, smtpUrl: smtp.url })
})
afterAll(async () => { await rig?.close(); await smtp?.close() })

const mailTo = (to: string) => waitFor(`mail to ${to}`, async () => {
  const [m] = await rig.context.db.select().from(mailbox).where(eq(mailbox.to, to)).orderBy(desc(mailbox.id)).limit(1)
  return m ?? null
}, 15_000)

describe('browser: team administration and mail', () => {
  it('signs up, follows the mailed link with the password, and reads that message in their own captured mail', async () => {
    const page = await rig.newPage()
    await page.goto(`${rig.baseUrl}/signup`)
    await page.getByLabel('Name').fill('Tamsin Reed')
    await page.getByLabel('E-mail').fill('tamsin.reed@example.org')
    await page.getByLabel('Password').fill('long-enough-31')
    await page.getByRole('button', { name: 'Create account' }).click()
    await expect.poll(() => page.locator('[data-testid="signup-sent"]').getByText(/Check your mail/).count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'signup-check-mail')
    const mail = await mailTo('tamsin.reed@example.org')
    const link = /http\S+\/verify-email\/\S+/.exec(mail.text)![0]
    await page.goto(link)
    await page.getByLabel('Password').fill('not-what-i-chose')
    await page.getByRole('button', { name: 'Confirm and create the account' }).click()
    await expect.poll(() => page.getByText('This is not the password chosen at sign-up.').count()).toBeGreaterThan(0)
    await page.getByLabel('Password').fill('long-enough-31')
    await rig.screenshot(page, 'verify-email')
    await page.getByRole('button', { name: 'Confirm and create the account' }).click()
    await page.waitForURL(/\/w\/[^/]+\/library/)
    const slug = /\/w\/([^/]+)\//.exec(page.url())![1]
    await page.goto(`${rig.baseUrl}/w/${slug}/team`)
    await page.getByRole('button', { name: 'Your captured mail' }).click()
    await page.waitForURL(/\/mailbox/)
    await expect.poll(() => page.getByText('Confirm your e-mail address for Pewter').count()).toBeGreaterThan(0)
    await page.close()
  })

  it('admin invites from the Team page; the admin\'s mailbox does not show the invitee\'s message; the invitee follows the link and joins', async () => {
    const page = await rig.newPage()
    await rig.signIn(page, demo.admin)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/team`)
    // the machine is shared: give the page's chunks time to arrive
    await expect.poll(() => page.locator('[data-testid="members"]').getByText(demo.modeler).count(), { timeout: 20_000 }).toBeGreaterThan(0)
    await page.locator('input[name="invite-email"]').fill('browser.hire@example.org')
    await page.getByRole('button', { name: 'Send invitation' }).click()
    await expect.poll(() => page.locator('[data-testid="invitations"]').getByText('browser.hire@example.org').count(), { timeout: 20_000 }).toBeGreaterThan(0)
    await rig.screenshot(page, 'team-page')

    const mail = await mailTo('browser.hire@example.org')
    await page.getByRole('button', { name: 'Your captured mail' }).click()
    await page.waitForURL(/\/w\/tinmoor\/mailbox/)
    await expect.poll(() => page.getByText('Your captured mail').count()).toBeGreaterThan(0)
    await page.waitForLoadState('networkidle')
    expect(await page.getByText(/You are invited to Tinmoor Works/).count()).toBe(0)
    await rig.screenshot(page, 'mailbox-page')
    await page.close()
    // the invitee reads the message in their own mail (here: the captured copy addressed to them)
    const link = /http\S+\/invitations\/\S+/.exec(mail.text)![0]
    expect(link).toMatch(new RegExp(`^${rig.baseUrl}/invitations/pwi_`))

    const invitee = await rig.newPage()
    await invitee.goto(link!)
    await expect.poll(() => invitee.getByText(/as/).filter({ hasText: 'browser.hire@example.org' }).count()).toBeGreaterThan(0)
    await invitee.getByLabel('Your name').fill('Browser Hire')
    await invitee.getByLabel(/Choose a password/).fill('long-enough-11')
    await rig.screenshot(invitee, 'accept-invitation')
    await invitee.getByRole('button', { name: 'Create the account and join' }).click()
    await invitee.waitForURL(/\/w\/tinmoor\/library/)
    await invitee.close()
  })

  it('forgot password → e-mail → reset page → sign in with the new password', async () => {
    const page = await rig.newPage()
    await page.goto(`${rig.baseUrl}/signin`)
    await page.getByRole('link', { name: 'Forgot your password?' }).click()
    await page.waitForURL(/\/forgot-password/)
    await page.getByLabel('E-mail').fill(demo.reviewer)
    await page.getByRole('button', { name: 'Send the link' }).click()
    await expect.poll(() => page.getByText(/a message with a reset link is on its way/).count()).toBeGreaterThan(0)
    const mail = await mailTo(demo.reviewer)
    const link = /http\S+reset-password\/\S+/.exec(mail.text)![0]
    await page.goto(link)
    await page.getByLabel(/New password/).fill('renewed-password-5')
    await page.getByLabel('The same again').fill('renewed-password-5')
    await page.getByRole('button', { name: 'Change the password' }).click()
    await expect.poll(() => page.getByText(/Your password has been changed/).count()).toBeGreaterThan(0)
    await rig.screenshot(page, 'reset-password-done')
    await rig.signIn(page, demo.reviewer, 'renewed-password-5')
    await page.waitForURL(/\/w\/tinmoor\/library/)
    await page.close()
  })

  it('a modeler creates an API token on the Team page; it is shown once', async () => {
    const page = await rig.newPage()
    await rig.signIn(page, demo.modeler)
    await page.waitForURL(/\/w\/tinmoor\//)
    await page.goto(`${rig.baseUrl}/w/tinmoor/team`)
    await page.locator('input[name="token-name"]').fill('laptop CLI')
    // a token's role is at most the maker's: a modeler is offered modeler, reviewer and viewer, never admin
    await page.getByTestId('token-form').locator('.el-select').click()
    const roleOptions = page.locator('.el-select-dropdown:visible .el-select-dropdown__item')
    await expect.poll(() => roleOptions.allTextContents()).toEqual(['modeler', 'reviewer', 'viewer'])
    await roleOptions.filter({ hasText: 'reviewer' }).click()
    await page.getByRole('button', { name: 'Create token' }).click()
    const token = await page.locator('[data-testid="new-token"]').textContent()
    expect(token).toMatch(/^pwt_/)
    await expect.poll(() => page.locator('[data-testid="tokens"]').getByText('laptop CLI').count()).toBeGreaterThan(0)
    expect(await page.locator('[data-testid="tokens"]').getByText(token!).count()).toBe(0)
    expect(await page.locator('[data-testid="tokens"] .el-table__row').filter({ hasText: 'laptop CLI' }).locator('.role-tag').textContent()).toBe('reviewer')
    // the modeler sees no admin sections
    expect(await page.getByRole('button', { name: 'Send invitation' }).count()).toBe(0)
    await rig.screenshot(page, 'team-tokens')
    await page.close()
  })
})
