/**
 * The captured local mail (development and demo installs without a real relay): a signed-in user
 * reads only the messages whose envelope named their own, confirmed address. Nobody else, whatever
 * their role in any workspace, sees them.
 */
import { and, arrayContains, desc, eq, isNotNull } from 'drizzle-orm'
import type { Db } from '../db/client'
import { mailbox, users } from '../db/schema'
import { notFound } from '../errors'
import type { MailDto } from '../../shared/api/team'

const dto = (r: typeof mailbox.$inferSelect): MailDto => ({
  id: r.id, from: r.from, to: r.to, subject: r.subject, text: r.text, html: r.html, receivedAt: r.receivedAt.toISOString(),
})

/** The user's confirmed address, or null (an unconfirmed account reads no mail here). */
async function ownAddress(db: Db, userId: number): Promise<string | null> {
  const [u] = await db.select({ email: users.email }).from(users).where(and(eq(users.id, userId), isNotNull(users.emailVerifiedAt)))
  return u ? u.email.toLowerCase() : null
}

/**
 * The mailbox page's reply: the user's messages and whether this server captures mail at all (no real
 * relay, or `npm start`'s local fake SMTP server in front of one).
 */
export async function ownMailbox(context: { db: Db; config: { smtpUrl: string | null } }, userId: number): Promise<{ messages: MailDto[]; capturing: boolean }> {
  return { messages: await listOwnMail(context.db, userId), capturing: !context.config.smtpUrl || process.env.PEWTER_FAKE_SMTP === '1' }
}

async function listOwnMail(db: Db, userId: number, limit = 200): Promise<MailDto[]> {
  const email = await ownAddress(db, userId)
  if (!email) return []
  const rows = await db.select().from(mailbox).where(arrayContains(mailbox.recipients, [email])).orderBy(desc(mailbox.id)).limit(limit)
  return rows.map(dto)
}

/** One message; 404 unless it was addressed to the user (never confirms that another exists). */
export async function readOwnMail(db: Db, userId: number, id: number): Promise<MailDto> {
  const email = await ownAddress(db, userId)
  if (!email) throw notFound('Message')
  const [row] = await db.select().from(mailbox).where(and(eq(mailbox.id, id), arrayContains(mailbox.recipients, [email])))
  if (!row) throw notFound('Message')
  return dto(row)
}
