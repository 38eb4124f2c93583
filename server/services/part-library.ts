/**
 * Parts from the workspace library: a sheet's `part NAME = HANDLE@VERSION` lines name a model of
 * the same workspace by its slug and a version number. Models of other workspaces are never
 * resolved. Also the lineage rows (which part versions a version uses).
 */
import { and, eq, inArray } from 'drizzle-orm'
import type { Db } from '../db/client'
import { models, modelVersionParts, modelVersions } from '../db/schema'
import { loadParts, type ResolvePart, usesParts } from '../../shared/sheet'
import type { SheetSummary } from '../../shared/api/models'

type Conn = Db | Parameters<Parameters<Db['transaction']>[0]>[0]

/** A resolver over every part the sheet needs, read from the workspace's library; null for a sheet without parts. */
export async function workspaceParts(db: Conn, workspaceId: number, text: string): Promise<ResolvePart | null> {
  if (!usesParts(text)) return null
  return loadParts(text, async (handle, version) => {
    const [row] = await db.select({ text: modelVersions.text }).from(modelVersions)
      .innerJoin(models, eq(models.id, modelVersions.modelId))
      .where(and(eq(models.workspaceId, workspaceId), eq(models.slug, handle), eq(modelVersions.number, version))).limit(1)
    return row?.text ?? null
  })
}

/**
 * The texts of every part a sheet needs (recursively), keyed `handle@version`, as plain data that can
 * travel to a worker thread (see partsResolver in shared/sheet/parts.ts). Empty for a sheet without parts.
 */
export async function workspacePartTexts(db: Conn, workspaceId: number, text: string): Promise<Record<string, string>> {
  const out: Record<string, string> = {}
  if (!usesParts(text)) return out
  await loadParts(text, async (handle, version) => {
    const [row] = await db.select({ text: modelVersions.text }).from(modelVersions)
      .innerJoin(models, eq(models.id, modelVersions.modelId))
      .where(and(eq(models.workspaceId, workspaceId), eq(models.slug, handle), eq(modelVersions.number, version))).limit(1)
    if (row) out[`${handle}@${version}`] = row.text
    return row?.text ?? null
  })
  return out
}

/** Record the part versions a new version uses (from its checked summary). */
export async function recordParts(tx: Conn, workspaceId: number, versionId: number, summary: SheetSummary): Promise<void> {
  const used = summary.partsUsed ?? []
  if (!used.length) return
  const rows = await tx.select({ id: models.id, slug: models.slug }).from(models)
    .where(and(eq(models.workspaceId, workspaceId), inArray(models.slug, [...new Set(used.map((u) => u.handle))])))
  const idOf = new Map(rows.map((r) => [r.slug, r.id]))
  const values = used.filter((u) => idOf.has(u.handle)).map((u) => ({ versionId, partModelId: idOf.get(u.handle)!, partVersion: u.version }))
  if (values.length) await tx.insert(modelVersionParts).values(values).onConflictDoNothing()
}

export interface PartUser { modelId: number; slug: string; title: string; version: number; partVersion: number }

/** The model versions that use versions of this model as a part. */
export async function usersOf(db: Conn, modelId: number): Promise<PartUser[]> {
  return db.select({ modelId: models.id, slug: models.slug, title: models.title, version: modelVersions.number, partVersion: modelVersionParts.partVersion })
    .from(modelVersionParts)
    .innerJoin(modelVersions, eq(modelVersions.id, modelVersionParts.versionId))
    .innerJoin(models, eq(models.id, modelVersions.modelId))
    .where(eq(modelVersionParts.partModelId, modelId))
    .orderBy(models.title, modelVersions.number)
}
