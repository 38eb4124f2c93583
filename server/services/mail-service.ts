/** The mailer attached to the app context (ctx.services.mailer), with a fallback built from the config. */
import type { AppContext } from '../context'
import { createMailer, type Mailer } from '../mail/mailer'

export function mailerOf(context: AppContext): Mailer {
  let m = context.services.mailer as Mailer | undefined
  if (!m) {
    m = createMailer(context.config)
    context.services.mailer = m
  }
  return m
}

/** An absolute link into the client, from PUBLIC_URL. */
export const appLink = (context: AppContext, path: string) => `${context.config.publicUrl.replace(/\/$/, '')}${path}`
