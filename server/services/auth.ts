import { eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { users } from '../db/schema'
import { DUMMY_HASH, verifyPassword } from '../auth/passwords'
import { listMemberships } from './workspaces'
import { HttpError, notFound } from '../errors'
import { errorCodes } from '../../shared/api/errors'
import type { MeReply, SigninBody } from '../../shared/api/auth'

/** Checks e-mail and password; the same 401 (and the same work) whether or not the e-mail exists. */
export async function signin(db: Db, body: SigninBody) {
  const [user] = await db.select().from(users).where(eq(users.email, body.email)).limit(1)
  const ok = await verifyPassword(body.password, user?.passwordHash ?? DUMMY_HASH)
  if (!user || !ok) return { user: null, attemptedUserId: user?.id ?? null }
  return { user, attemptedUserId: user.id }
}

export const invalidCredentials = () => new HttpError(401, errorCodes.unauthenticated, 'E-mail or password is wrong.')

export async function me(db: Db, userId: number): Promise<MeReply> {
  const [user] = await db.select().from(users).where(eq(users.id, userId)).limit(1)
  if (!user) throw notFound('User')
  const workspaces = await listMemberships(db, userId)
  const current = workspaces.find((w) => w.id === user.currentWorkspaceId) ?? workspaces[0] ?? null
  return { user: { id: user.id, email: user.email, name: user.name, emailVerified: user.emailVerifiedAt !== null }, workspaces, currentWorkspaceId: current?.id ?? null }
}

export async function switchWorkspace(db: Db, userId: number, workspaceId: number) {
  const workspaces = await listMemberships(db, userId)
  if (!workspaces.some((w) => w.id === workspaceId)) throw notFound('Workspace')
  await db.update(users).set({ currentWorkspaceId: workspaceId }).where(eq(users.id, userId))
}
