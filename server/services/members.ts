/** Workspace members: list, change a role, remove; the last admin can be neither demoted nor removed. */
import { and, asc, eq, isNull, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { apiTokens, memberships, users } from '../db/schema'
import { conflict, notFound } from '../errors'
import type { Role } from '../../shared/api/auth'
import type { MemberDto } from '../../shared/api/team'

export async function listMembers(db: Db, workspaceId: number): Promise<MemberDto[]> {
  const rows = await db
    .select({ userId: users.id, name: users.name, email: users.email, role: memberships.role, joinedAt: memberships.createdAt })
    .from(memberships).innerJoin(users, eq(users.id, memberships.userId))
    .where(eq(memberships.workspaceId, workspaceId))
    .orderBy(asc(users.name))
  return rows.map((r) => ({ ...r, role: r.role as Role, joinedAt: r.joinedAt.toISOString() }))
}

const lastAdmin = () => conflict('This is the last admin of the workspace: make another member admin first.')

/**
 * Runs `change` on the member's row with the workspace's admin rows locked, so two admins demoting
 * each other at once cannot leave the workspace without an admin.
 */
async function withAdminsLocked<T>(db: Db, workspaceId: number, userId: number, change: (tx: Db, current: Role, admins: number) => Promise<T>) {
  return db.transaction(async (tx) => {
    const locked = await tx.execute<{ user_id: number; role: string }>(
      sql`select user_id, role from memberships where workspace_id = ${workspaceId} for update`)
    const me = locked.rows.find((r) => r.user_id === userId)
    if (!me) throw notFound('Member')
    const admins = locked.rows.filter((r) => r.role === 'admin').length
    return change(tx as unknown as Db, me.role as Role, admins)
  })
}

export async function changeRole(db: Db, workspaceId: number, userId: number, role: Role): Promise<{ from: Role; to: Role }> {
  return withAdminsLocked(db, workspaceId, userId, async (tx, current, admins) => {
    if (current === 'admin' && role !== 'admin' && admins <= 1) throw lastAdmin()
    await tx.update(memberships).set({ role }).where(and(eq(memberships.workspaceId, workspaceId), eq(memberships.userId, userId)))
    return { from: current, to: role }
  })
}

export async function removeMember(db: Db, workspaceId: number, userId: number): Promise<{ role: Role; email: string }> {
  return withAdminsLocked(db, workspaceId, userId, async (tx, current, admins) => {
    if (current === 'admin' && admins <= 1) throw lastAdmin()
    await tx.delete(memberships).where(and(eq(memberships.workspaceId, workspaceId), eq(memberships.userId, userId)))
    await tx.update(apiTokens).set({ revokedAt: sql`now()` })
      .where(and(eq(apiTokens.workspaceId, workspaceId), eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    const [u] = await tx.select({ email: users.email, current: users.currentWorkspaceId }).from(users).where(eq(users.id, userId))
    if (u?.current === workspaceId) await tx.update(users).set({ currentWorkspaceId: null }).where(eq(users.id, userId))
    return { role: current, email: u?.email ?? '' }
  })
}
