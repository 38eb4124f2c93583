/**
 * Parts from the workspace library: a sheet's `part NAME = HANDLE@VERSION` lines name a model of
 * the same workspace by its slug and a version number. Models of other workspaces are never
 * resolved. Also the lineage rows (which part versions a version uses).
 */
import { and, eq, inArray } from 'drizzle-orm'
import type { Db } from '../db/client'
import { models, modelVersionParts, modelVersions } from '../db/schema'
import { loadPartTexts, partsResolver, type ResolvePart, usesParts } from '../../shared/sheet'
import type { SheetSummary } from '../../shared/api/models'

type Conn = Db | Parameters<Parameters<Db['transaction']>[0]>[0]

/**
 * The texts of every part a sheet needs (recursively), keyed `handle@version`, read from the
 * workspace's library: plain data that can travel to a worker thread or to the editor. Empty for a
 * sheet without parts; parts missing from the library are left out (the flattener names them).
 */
export async function workspacePartTexts(db: Conn, workspaceId: number, text: string): Promise<Record<string, string>> {
  if (!usesParts(text)) return {}
  return loadPartTexts(text, async (handle, version) => {
    const [row] = await db.select({ text: modelVersions.text }).from(modelVersions)
      .innerJoin(models, eq(models.id, modelVersions.modelId))
      .where(and(eq(models.workspaceId, workspaceId), eq(models.slug, handle), eq(modelVersions.number, version))).limit(1)
    return row?.text ?? null
  })
}

/** A resolver over every part the sheet needs (workspacePartTexts); null for a sheet without parts. */
export async function workspaceParts(db: Conn, workspaceId: number, text: string): Promise<ResolvePart | null> {
  if (!usesParts(text)) return null
  return partsResolver(await workspacePartTexts(db, workspaceId, text)) ?? null
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
