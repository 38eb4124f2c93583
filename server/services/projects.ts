import { and, desc, eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { projects } from '../db/schema'
import { notFound } from '../errors'
import type { CreateProjectBody, ProjectDto, UpdateProjectBody } from '../../shared/api/projects'

const toDto = (p: typeof projects.$inferSelect): ProjectDto => ({
  id: p.id, name: p.name, description: p.description, createdAt: p.createdAt.toISOString(), createdBy: p.createdBy,
})

export async function listProjects(db: Db, workspaceId: number) {
  const rows = await db.select().from(projects).where(eq(projects.workspaceId, workspaceId)).orderBy(desc(projects.createdAt))
  return rows.map(toDto)
}

export async function createProject(db: Db, workspaceId: number, userId: number, body: CreateProjectBody) {
  const [p] = await db.insert(projects).values({ workspaceId, createdBy: userId, name: body.name, description: body.description }).returning()
  return toDto(p)
}

/** A project of this workspace; 404 for another workspace's project. */
export async function getProjectRow(db: Db, workspaceId: number, projectId: number) {
  const [p] = await db.select().from(projects).where(and(eq(projects.id, projectId), eq(projects.workspaceId, workspaceId))).limit(1)
  if (!p) throw notFound('Project')
  return p
}

export async function getProject(db: Db, workspaceId: number, projectId: number) {
  return toDto(await getProjectRow(db, workspaceId, projectId))
}

export async function updateProject(db: Db, workspaceId: number, projectId: number, body: UpdateProjectBody) {
  const p = await getProjectRow(db, workspaceId, projectId)
  if (body.name === undefined && body.description === undefined) return toDto(p)
  const [u] = await db.update(projects).set({ ...(body.name !== undefined ? { name: body.name } : {}), ...(body.description !== undefined ? { description: body.description } : {}) })
    .where(eq(projects.id, p.id)).returning()
  return toDto(u)
}
