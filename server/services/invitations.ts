/**
 * Workspace invitations: an admin invites an e-mail address with a role; the message carries a
 * single-use link valid for INVITATION_DAYS. Only the token's SHA-256 is stored.
 */
import { and, desc, eq, gt, isNull, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import type { AppContext } from '../context'
import { invitations, memberships, users, workspaces } from '../db/schema'
import { conflict, HttpError, notFound } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import type { Role } from '../../shared/api/auth'
import type { InvitationDto, InvitationPreview, InviteBody } from '../../shared/api/team'
import { hashSecret, newSecret, tokenGone } from './secrets'
import { appLink, mailerOf } from './mail-service'
import { invitationMail } from '../mail/templates'
import { assertUncommonPassword, hashPassword } from '../auth/passwords'
import { retirePendingSignups } from './email-verification'

export const INVITATION_DAYS = 7

export async function listPendingInvitations(db: Db, workspaceId: number): Promise<InvitationDto[]> {
  const rows = await db
    .select({ id: invitations.id, email: invitations.email, role: invitations.role, invitedBy: users.name, expiresAt: invitations.expiresAt, createdAt: invitations.createdAt })
    .from(invitations).leftJoin(users, eq(users.id, invitations.invitedBy))
    .where(and(eq(invitations.workspaceId, workspaceId), isNull(invitations.acceptedAt), isNull(invitations.revokedAt), gt(invitations.expiresAt, sql`now()`)))
    .orderBy(desc(invitations.createdAt))
  return rows.map((r) => ({ ...r, role: r.role as Role, expiresAt: r.expiresAt.toISOString(), createdAt: r.createdAt.toISOString() }))
}

export async function createInvitation(context: AppContext, ws: { id: number; name: string }, inviterId: number, body: InviteBody) {
  const { db } = context
  const member = await db.select({ id: users.id }).from(users)
    .innerJoin(memberships, and(eq(memberships.userId, users.id), eq(memberships.workspaceId, ws.id)))
    .where(eq(users.email, body.email)).limit(1)
  if (member.length) throw conflict(`${body.email} is already a member of this workspace.`)
  const token = newSecret('pwi')
  const expiresAt = new Date(Date.now() + INVITATION_DAYS * 86400_000)
  // a new invitation for the same address replaces the pending one
  await db.update(invitations).set({ revokedAt: sql`now()` })
    .where(and(eq(invitations.workspaceId, ws.id), eq(invitations.email, body.email), isNull(invitations.acceptedAt), isNull(invitations.revokedAt)))
  const [row] = await db.insert(invitations).values({ workspaceId: ws.id, email: body.email, role: body.role, tokenHash: hashSecret(token), invitedBy: inviterId, expiresAt }).returning()
  const [inviter] = await db.select({ name: users.name }).from(users).where(eq(users.id, inviterId))
  const sent = await mailerOf(context).send(invitationMail({
    to: body.email, workspace: ws.name, role: body.role, inviter: inviter?.name ?? 'An admin', expiresAt,
    link: appLink(context, `/invitations/${token}`),
  }))
  return { invitation: (await listPendingInvitations(db, ws.id)).find((i) => i.id === row.id)!, mailed: sent }
}

export async function revokeInvitation(db: Db, workspaceId: number, id: number) {
  const r = await db.update(invitations).set({ revokedAt: sql`now()` })
    .where(and(eq(invitations.id, id), eq(invitations.workspaceId, workspaceId), isNull(invitations.acceptedAt), isNull(invitations.revokedAt)))
    .returning({ email: invitations.email })
  if (!r.length) throw notFound('Invitation')
  return r[0]
}

async function findByToken(db: Db, token: string) {
  const [row] = await db
    .select({ inv: invitations, ws: { id: workspaces.id, slug: workspaces.slug, name: workspaces.name } })
    .from(invitations).innerJoin(workspaces, eq(workspaces.id, invitations.workspaceId))
    .where(eq(invitations.tokenHash, hashSecret(token))).limit(1)
  if (!row) throw notFound('Invitation')
  if (row.inv.acceptedAt || row.inv.revokedAt || row.inv.expiresAt.getTime() <= Date.now()) throw tokenGone('invitation')
  return row
}

export async function previewInvitation(db: Db, token: string): Promise<InvitationPreview> {
  const { inv, ws } = await findByToken(db, token)
  const account = await db.select({ id: users.id }).from(users).where(eq(users.email, inv.email)).limit(1)
  return { workspace: { slug: ws.slug, name: ws.name }, email: inv.email, role: inv.role as Role, expiresAt: inv.expiresAt.toISOString(), accountExists: account.length > 0 }
}

/**
 * Accepts an invitation. Signed in: the caller's e-mail must be the invited one. Signed out: creates
 * the account for the invited address from `name` and `password` (refused when one exists: sign in).
 * The token is consumed in the same transaction (a second use answers 410).
 */
export async function acceptInvitation(db: Db, token: string, who: { userId: number } | { name?: string; password?: string }) {
  const { inv, ws } = await findByToken(db, token)
  let userId = 0
  let passwordHash: string | null = null
  if ('userId' in who) {
    const [u] = await db.select({ email: users.email, verified: users.emailVerifiedAt }).from(users).where(eq(users.id, who.userId))
    if (!u || u.email !== inv.email) {
      throw new HttpError(403, errorCodes.forbidden, `This invitation is for ${inv.email}; you are signed in as ${u?.email ?? 'someone else'}.`)
    }
    if (!u.verified) {
      throw new HttpError(403, errorCodes.forbidden, `Confirm your e-mail address ${u.email} first (a link by mail, from the invitation page), then accept the invitation.`)
    }
    userId = who.userId
  } else {
    const existing = await db.select({ id: users.id }).from(users).where(eq(users.email, inv.email)).limit(1)
    if (existing.length) throw new HttpError(401, errorCodes.unauthenticated, `An account for ${inv.email} exists: sign in with it, then accept the invitation.`)
    if (!who.name || !who.password) {
      throw new HttpError(400, errorCodes.validation, 'Invalid body: body.name and body.password are needed to create the account.', [
        ...(!who.name ? [{ path: 'body.name', message: 'required' }] : []),
        ...(!who.password ? [{ path: 'body.password', message: 'required' }] : []),
      ])
    }
    assertUncommonPassword(who.password)
    passwordHash = await hashPassword(who.password)
  }
  const created = passwordHash !== null
  await db.transaction(async (tx) => {
    const used = await tx.update(invitations).set({ acceptedAt: sql`now()` })
      .where(and(eq(invitations.id, inv.id), isNull(invitations.acceptedAt), isNull(invitations.revokedAt), gt(invitations.expiresAt, sql`now()`)))
      .returning({ id: invitations.id })
    if (!used.length) throw tokenGone('invitation')
    if (passwordHash !== null && 'name' in who) {
      // the invitation link came by mail to this address: the account starts confirmed
      const [u] = await tx.insert(users).values({ email: inv.email, name: who.name!, passwordHash, emailVerifiedAt: sql`now()` }).returning({ id: users.id })
      userId = u.id
      await retirePendingSignups(tx as unknown as Db, inv.email)
    }
    await tx.insert(memberships).values({ workspaceId: ws.id, userId, role: inv.role }).onConflictDoNothing()
    await tx.update(users).set({ currentWorkspaceId: ws.id }).where(eq(users.id, userId))
  })
  return { userId, created, workspace: ws, role: inv.role as Role, email: inv.email }
}
