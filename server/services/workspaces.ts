import { and, eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { memberships, workspaces } from '../db/schema'
import type { Role, WorkspaceMembershipDto } from '../../shared/api/auth'

export function slugify(text: string): string {
  const s = text.toLowerCase().normalize('NFKD').replace(/[^a-z0-9]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 48)
  return s || 'workspace'
}

/** A slug not yet used in `table`, from a base text (appends -2, -3, … when taken). */
export async function uniqueWorkspaceSlug(db: Db, base: string): Promise<string> {
  const root = slugify(base)
  for (let i = 1; ; i++) {
    const slug = i === 1 ? root : `${root}-${i}`
    const hit = await db.select({ id: workspaces.id }).from(workspaces).where(eq(workspaces.slug, slug)).limit(1)
    if (!hit.length) return slug
  }
}

export async function createWorkspace(db: Db, name: string, ownerId: number, slug?: string) {
  const [ws] = await db.insert(workspaces).values({ name, slug: slug ?? (await uniqueWorkspaceSlug(db, name)) }).returning()
  await db.insert(memberships).values({ workspaceId: ws.id, userId: ownerId, role: 'admin' })
  return ws
}

export async function listMemberships(db: Db, userId: number): Promise<WorkspaceMembershipDto[]> {
  const rows = await db
    .select({ id: workspaces.id, slug: workspaces.slug, name: workspaces.name, role: memberships.role })
    .from(memberships)
    .innerJoin(workspaces, eq(workspaces.id, memberships.workspaceId))
    .where(eq(memberships.userId, userId))
    .orderBy(workspaces.name)
  return rows.map((r) => ({ ...r, role: r.role as Role }))
}

/** The workspace named by id or slug, with the user's role in it; null when the user is not a member. */
export async function findMembership(db: Db, userId: number, ws: string) {
  const byId = /^\d+$/.test(ws)
  const rows = await db
    .select({ id: workspaces.id, slug: workspaces.slug, name: workspaces.name, role: memberships.role })
    .from(workspaces)
    .innerJoin(memberships, and(eq(memberships.workspaceId, workspaces.id), eq(memberships.userId, userId)))
    .where(byId ? eq(workspaces.id, Number(ws)) : eq(workspaces.slug, ws))
    .limit(1)
  return rows.length ? { ...rows[0], role: rows[0].role as Role } : null
}
