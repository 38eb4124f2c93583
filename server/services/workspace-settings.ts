/** A workspace's own rules: for now the four-eyes rule on approving model versions. */
import { eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { workspaces } from '../db/schema'
import { notFound } from '../errors'
import type { WorkspaceSettingsDto } from '../../shared/api/team'

export async function getWorkspaceSettings(db: Db, workspaceId: number): Promise<WorkspaceSettingsDto> {
  const [w] = await db.select({ fourEyes: workspaces.fourEyes }).from(workspaces).where(eq(workspaces.id, workspaceId))
  if (!w) throw notFound('Workspace')
  return w
}

/** Applies the given settings; returns the settings before and after (for the audit). */
export async function updateWorkspaceSettings(db: Db, workspaceId: number, body: Partial<WorkspaceSettingsDto>) {
  const before = await getWorkspaceSettings(db, workspaceId)
  if (body.fourEyes !== undefined) await db.update(workspaces).set({ fourEyes: body.fourEyes }).where(eq(workspaces.id, workspaceId))
  return { before, after: await getWorkspaceSettings(db, workspaceId) }
}

/** Whether a version's author is barred from approving it in this workspace. */
export async function fourEyesRule(db: Db, workspaceId: number): Promise<boolean> {
  return (await getWorkspaceSettings(db, workspaceId)).fourEyes
}
