/**
 * Sign-up by e-mail verification. A sign-up answers the same whatever the address (no account
 * discovery): for a new address it stores the chosen name and password hash with a single-use link
 * and mails the link; for a known one it mails the owner a notice. The account exists only once the
 * link is followed with the password chosen at sign-up (so a stranger who signs up with someone
 * else's address gets nothing even if that person clicks the link). A signed-in account whose address
 * was never confirmed asks for a link too. Only the token's SHA-256 is stored.
 */
import { and, eq, gt, isNull, sql } from 'drizzle-orm'
import type { AppContext } from '../context'
import type { Db } from '../db/client'
import { emailVerifications, users } from '../db/schema'
import { hashPassword, verifyPassword } from '../auth/passwords'
import { conflict, HttpError, notFound } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import type { SignupBody, VerificationPreview } from '../../shared/api/auth'
import { hashSecret, newSecret, tokenGone } from './secrets'
import { appLink, mailerOf } from './mail-service'
import { accountExistsMail, verifyEmailMail } from '../mail/templates'
import { createWorkspace } from './workspaces'

export const VERIFICATION_HOURS = 24

const expiry = () => new Date(Date.now() + VERIFICATION_HOURS * 3600_000)

/**
 * The work behind POST /api/auth/signup, run after the reply has gone (so its timing says nothing).
 * Resolves to what happened, for the audit.
 */
export async function requestSignup(context: AppContext, body: SignupBody): Promise<{ existingUserId: number | null }> {
  const { db } = context
  // hash first on both paths, so the two paths also cost the same inside the server
  const passwordHash = await hashPassword(body.password)
  const [existing] = await db.select({ id: users.id }).from(users).where(eq(users.email, body.email)).limit(1)
  if (existing) {
    await mailerOf(context).send(accountExistsMail({ to: body.email, signInLink: appLink(context, '/signin'), resetLink: appLink(context, '/forgot-password') }))
    return { existingUserId: existing.id }
  }
  const token = newSecret('pwv')
  const expiresAt = expiry()
  await db.insert(emailVerifications).values({ email: body.email, name: body.name, passwordHash, tokenHash: hashSecret(token), expiresAt })
  await mailerOf(context).send(verifyEmailMail({ to: body.email, expiresAt, signup: true, link: appLink(context, `/verify-email/${token}`) }))
  return { existingUserId: null }
}

/** For a signed-in account whose address is not confirmed yet: mails a link (409 when it is confirmed). */
export async function requestVerificationLink(context: AppContext, userId: number) {
  const { db } = context
  const [u] = await db.select({ email: users.email, verified: users.emailVerifiedAt }).from(users).where(eq(users.id, userId))
  if (!u) throw notFound('User')
  if (u.verified) throw conflict('Your e-mail address is already confirmed.')
  const token = newSecret('pwv')
  const expiresAt = expiry()
  await db.insert(emailVerifications).values({ email: u.email, userId, tokenHash: hashSecret(token), expiresAt })
  return mailerOf(context).send(verifyEmailMail({ to: u.email, expiresAt, signup: false, link: appLink(context, `/verify-email/${token}`) }))
}

async function findLink(db: Db, token: string) {
  const [row] = await db.select().from(emailVerifications).where(eq(emailVerifications.tokenHash, hashSecret(token))).limit(1)
  if (!row) throw notFound('Verification link')
  if (row.usedAt || row.expiresAt.getTime() <= Date.now()) throw tokenGone('verification')
  return row
}

export async function previewVerification(db: Db, token: string): Promise<VerificationPreview> {
  const row = await findLink(db, token)
  return { email: row.email, signup: row.userId === null }
}

const wrongPassword = () => new HttpError(401, errorCodes.unauthenticated, 'This is not the password chosen at sign-up.', [{ path: 'body.password', message: 'not the password chosen at sign-up' }])

/**
 * Follows a link. A sign-up link needs the password chosen at sign-up and creates the account
 * (confirmed, with a workspace of its own); an account's link confirms its address.
 */
export async function confirmEmail(db: Db, token: string, password: string | undefined): Promise<{ userId: number; email: string; created: boolean }> {
  const row = await findLink(db, token)
  if (row.userId === null && !(password && row.passwordHash && await verifyPassword(password, row.passwordHash))) throw wrongPassword()
  return db.transaction(async (tx) => {
    const used = await tx.update(emailVerifications).set({ usedAt: sql`now()` })
      .where(and(eq(emailVerifications.id, row.id), isNull(emailVerifications.usedAt), gt(emailVerifications.expiresAt, sql`now()`)))
      .returning({ id: emailVerifications.id })
    if (!used.length) throw tokenGone('verification')
    if (row.userId !== null) {
      const done = await tx.update(users).set({ emailVerifiedAt: sql`coalesce(${users.emailVerifiedAt}, now())` })
        .where(and(eq(users.id, row.userId), eq(users.email, row.email))).returning({ id: users.id })
      if (!done.length) throw notFound('Account')
      return { userId: row.userId, email: row.email, created: false }
    }
    const [taken] = await tx.select({ id: users.id }).from(users).where(eq(users.email, row.email)).limit(1)
    if (taken) throw conflict(`An account for ${row.email} exists already: sign in with it.`)
    const [user] = await tx.insert(users).values({ email: row.email, name: row.name ?? row.email, passwordHash: row.passwordHash!, emailVerifiedAt: sql`now()` }).returning({ id: users.id })
    const ws = await createWorkspace(tx as unknown as Db, `${row.name ?? row.email}'s workspace`, user.id)
    await tx.update(users).set({ currentWorkspaceId: ws.id }).where(eq(users.id, user.id))
    // every other pending sign-up for this address dies with this one
    await tx.update(emailVerifications).set({ usedAt: sql`now()` }).where(and(eq(emailVerifications.email, row.email), isNull(emailVerifications.usedAt)))
    return { userId: user.id, email: row.email, created: true }
  })
}

/** Pending sign-up links for an address stop working (the address got an account another way). */
export async function retirePendingSignups(db: Db, email: string) {
  await db.update(emailVerifications).set({ usedAt: sql`now()` })
    .where(and(eq(emailVerifications.email, email), isNull(emailVerifications.userId), isNull(emailVerifications.usedAt)))
}
