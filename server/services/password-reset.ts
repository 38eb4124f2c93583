/**
 * Password reset by e-mail: the request answers the same whatever the address (no account
 * discovery); the link's token is single-use, expires after RESET_MINUTES, and only its SHA-256 is
 * stored. A reset signs the account out everywhere (its sessions are deleted) and revokes its API
 * tokens; following the mailed link also confirms the address.
 */
import { and, eq, gt, isNull, sql } from 'drizzle-orm'
import type { AppContext } from '../context'
import { apiTokens, passwordResets, users } from '../db/schema'
import { hashPassword } from '../auth/passwords'
import { notFound } from '../errors'
import { hashSecret, newSecret, tokenGone } from './secrets'
import { appLink, mailerOf } from './mail-service'
import { passwordResetMail } from '../mail/templates'

export const RESET_MINUTES = 60

/** Creates a token and mails the link when the address has an account. Resolves to the user id or null (for the audit). */
export async function requestPasswordReset(context: AppContext, email: string): Promise<number | null> {
  const { db } = context
  const [user] = await db.select({ id: users.id, email: users.email }).from(users).where(eq(users.email, email)).limit(1)
  if (!user) return null
  const token = newSecret('pwr')
  const expiresAt = new Date(Date.now() + RESET_MINUTES * 60_000)
  await db.insert(passwordResets).values({ userId: user.id, tokenHash: hashSecret(token), expiresAt })
  await mailerOf(context).send(passwordResetMail({ to: user.email, expiresAt, link: appLink(context, `/reset-password/${token}`) }))
  return user.id
}

export async function resetPassword(context: AppContext, token: string, password: string): Promise<number> {
  const { db } = context
  const [row] = await db.select().from(passwordResets).where(eq(passwordResets.tokenHash, hashSecret(token))).limit(1)
  if (!row) throw notFound('Password-reset link')
  if (row.usedAt || row.expiresAt.getTime() <= Date.now()) throw tokenGone('password-reset')
  const passwordHash = await hashPassword(password)
  await db.transaction(async (tx) => {
    const used = await tx.update(passwordResets).set({ usedAt: sql`now()` })
      .where(and(eq(passwordResets.id, row.id), isNull(passwordResets.usedAt), gt(passwordResets.expiresAt, sql`now()`)))
      .returning({ id: passwordResets.id })
    if (!used.length) throw tokenGone('password-reset')
    await tx.update(users).set({ passwordHash, emailVerifiedAt: sql`coalesce(${users.emailVerifiedAt}, now())` }).where(eq(users.id, row.userId))
    // every other pending link of this account dies with this one
    await tx.update(passwordResets).set({ usedAt: sql`now()` }).where(and(eq(passwordResets.userId, row.userId), isNull(passwordResets.usedAt)))
    await tx.execute(sql`delete from user_sessions where (sess->>'userId')::int = ${row.userId}`)
    // whoever knew the old password may have made tokens: they end too (the mail says so)
    await tx.update(apiTokens).set({ revokedAt: sql`now()` }).where(and(eq(apiTokens.userId, row.userId), isNull(apiTokens.revokedAt)))
  })
  return row.userId
}
