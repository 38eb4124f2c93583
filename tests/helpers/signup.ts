/**
 * Sign-up as a visitor does it: POST /api/auth/signup (202), read the confirmation link from the mail
 * the server sent to that address, follow it with the password. Every message the app sends is also
 * kept in memory (`capturedMail`), whether or not an SMTP server receives it.
 */
import request from 'supertest'
import type { Express } from 'express'
import type { AppContext } from '../../server/context'
import type { Mailer, MailMessage } from '../../server/mail/mailer'
import { mailerOf } from '../../server/services/mail-service'
import { CSRF, type Agent } from './app'
import { waitFor } from './jobs'

/** The messages the app has sent since the capture began (installed on first call). */
export function capturedMail(context: AppContext): MailMessage[] {
  const existing = context.services.mailCapture as MailMessage[] | undefined
  if (existing) return existing
  const inner = mailerOf(context)
  const kept: MailMessage[] = []
  const mailer: Mailer = { send: async (m) => { kept.push(m); return inner.send(m) }, close: () => inner.close() }
  context.services.mailer = mailer
  context.services.mailCapture = kept
  return kept
}

/** The newest captured message to `to` whose subject matches, after the first `after` messages. */
export function mailTo(context: AppContext, to: string, subject: RegExp, after = 0): Promise<MailMessage> {
  return waitFor(`a message "${subject.source}" to ${to}`, async () => capturedMail(context).slice(after).reverse().find((m) => m.to === to && subject.test(m.subject)) ?? null, 15_000)
}

/** The token at the end of the verification link in a message. */
export const verificationToken = (m: MailMessage) => {
  const hit = /\/verify-email\/(\S+)/.exec(m.text)
  if (!hit) throw new Error(`no verification link in:\n${m.text}`)
  return hit[1]
}

export interface SignUpBody { email: string; password: string; name: string }

/** Signs up, follows the mailed link; returns the signed-in agent and the /me reply. */
export async function signUpVerified(t: { app: Express; context: AppContext }, body: SignUpBody): Promise<{ agent: Agent; me: { user: { id: number; email: string }; workspaces: { id: number; slug: string; role: string }[] } }> {
  const after = capturedMail(t.context).length
  const agent = request.agent(t.app)
  const r = await agent.post('/api/auth/signup').set(CSRF).send(body)
  if (r.status !== 202) throw new Error(`sign-up of ${body.email}: ${r.status} ${JSON.stringify(r.body)}`)
  const mail = await mailTo(t.context, body.email.trim().toLowerCase(), /Confirm your e-mail/, after)
  const v = await agent.post(`/api/auth/verify-email/${verificationToken(mail)}`).set(CSRF).send({ password: body.password })
  if (v.status !== 200) throw new Error(`verification of ${body.email}: ${v.status} ${JSON.stringify(v.body)}`)
  return { agent, me: v.body.me }
}
