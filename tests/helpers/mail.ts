/** A test app whose e-mail goes through the local fake SMTP server into its own mailbox table. */
import { and, desc, eq, gt } from 'drizzle-orm'
import { createApp } from '../../server/app'
import { createContext } from '../../server/bootstrap'
import type { Config } from '../../server/config'
import { startFakeSmtp, type FakeSmtp } from '../../server/mail/fake-smtp'
import { mailbox } from '../../server/db/schema'
import type { Db } from '../../server/db/client'
import { freshDatabaseUrl } from './db'
import type { TestApp } from './app'
import { waitFor } from './jobs'

export interface MailTestApp extends TestApp { smtp: FakeSmtp }

export async function makeMailTestApp(tag: string, overrides: Partial<Config> = {}): Promise<MailTestApp> {
  const databaseUrl = await freshDatabaseUrl(tag)
  const smtp = await startFakeSmtp({ databaseUrl, port: 0 })
  const context = await createContext({ databaseUrl, rateLimitAuth: 10_000, smtpUrl: smtp.url, publicUrl: 'http://pewter.test', ...overrides })
  const app = createApp(context, { serveClient: false })
  return { app, context, smtp, close: async () => { await context.database.close(); await smtp.close() } }
}

/** The newest message to `to` received after message id `after` (waits up to 15 s). */
export async function waitForMail(db: Db, to: string, opts: { after?: number; subject?: RegExp } = {}) {
  return waitFor(`an e-mail to ${to}`, async () => {
    const rows = await db.select().from(mailbox).where(and(eq(mailbox.to, to), gt(mailbox.id, opts.after ?? 0))).orderBy(desc(mailbox.id))
    return rows.find((r) => !opts.subject || opts.subject.test(r.subject)) ?? null
  }, 15_000)
}

export async function lastMailId(db: Db): Promise<number> {
  const [r] = await db.select({ id: mailbox.id }).from(mailbox).orderBy(desc(mailbox.id)).limit(1)
  return r?.id ?? 0
}

/** The first link in a message's text that starts with the public URL. */
export function linkIn(text: string, base = 'http://pewter.test'): string {
  const m = new RegExp(`${base.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&')}\\S+`).exec(text)
  if (!m) throw new Error(`no link to ${base} in:\n${text}`)
  return m[0]
}
