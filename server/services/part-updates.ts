/**
 * The parts a model uses, seen from the library: the texts the editor needs for its live check,
 * the library's models as part handles, and the offer to move a model's pinned parts to their
 * newest approved versions (with the flattened sheets before and after, and their line diff);
 * accepting it writes the caller's draft, never a version.
 */
import { and, eq, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { models, modelVersions } from '../db/schema'
import { conflict, badRequest } from '../errors'
import { flatText, partsResolver, repinParts, type ResolvePart } from '../../shared/sheet'
import type { AcceptPartUpdatesBody, AcceptPartUpdatesReply, PartCatalogueReply, PartUpdate, PartUpdatesReply } from '../../shared/api/parts'
import { diffLines } from './diff'
import { workspacePartTexts } from './part-library'
import { getModelRow, saveDraft, storedSummary, versionRow, type Actor } from './models'

/** Every model of the workspace as a part handle, with its latest and newest approved version. */
export async function partCatalogue(db: Db, workspaceId: number): Promise<PartCatalogueReply> {
  const rows = await db.select({
    handle: models.slug, title: models.title,
    latest: sql<number>`coalesce(max(${modelVersions.number}), 0)::int`,
    latestApproved: sql<number | null>`(max(${modelVersions.number}) filter (where ${modelVersions.status} = 'approved'))::int`,
  }).from(models).innerJoin(modelVersions, eq(modelVersions.modelId, models.id))
    .where(eq(models.workspaceId, workspaceId)).groupBy(models.id).orderBy(models.slug)
  return { models: rows }
}

/** The flattened sheets before and after, and the line diff between them (the flat text of a sheet without parts is itself). */
export function flattenedDiff(before: string, after: string, resolve: ResolvePart | null) {
  const a = flatText(before, { resolvePart: resolve }).text
  const b = flatText(after, { resolvePart: resolve }).text
  return { before: { text: before, flat: a }, after: { text: after, flat: b }, ...diffLines(a ?? before, b ?? after) }
}

/** Direct parts of the latest version whose model has a newer approved version. */
async function pendingUpdates(db: Db, workspaceId: number, summary: ReturnType<typeof storedSummary>): Promise<PartUpdate[]> {
  const out: PartUpdate[] = []
  for (const p of summary.parts) {
    const [row] = await db.select({
      id: models.id, title: models.title,
      newest: sql<number | null>`(max(${modelVersions.number}) filter (where ${modelVersions.status} = 'approved'))::int`,
    }).from(models).innerJoin(modelVersions, eq(modelVersions.modelId, models.id))
      .where(and(eq(models.workspaceId, workspaceId), eq(models.slug, p.handle))).groupBy(models.id)
    if (row && row.newest !== null && row.newest > p.version) {
      out.push({ name: p.name, handle: p.handle, modelId: row.id, title: row.title, pinned: p.version, newest: row.newest })
    }
  }
  return out
}

const pinsOf = (updates: PartUpdate[]) => new Map(updates.map((u) => [u.name, u.newest]))

export async function partUpdates(db: Db, actor: Actor, modelId: number): Promise<PartUpdatesReply> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  const v = await versionRow(db, m.id, 'latest')
  const updates = await pendingUpdates(db, actor.workspaceId, storedSummary(v))
  const after = updates.length ? repinParts(v.text, pinsOf(updates)) : v.text
  const texts = { ...await workspacePartTexts(db, actor.workspaceId, v.text), ...await workspacePartTexts(db, actor.workspaceId, after) }
  return { version: v.number, updates, texts, ...flattenedDiff(v.text, after, partsResolver(texts) ?? null) }
}

export async function acceptPartUpdates(db: Db, actor: Actor, modelId: number, body: AcceptPartUpdatesBody): Promise<AcceptPartUpdatesReply> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  const v = await versionRow(db, m.id, 'latest')
  if (body.baseVersion !== v.number) throw conflict(`Version ${v.number} of "${m.title}" was published after version ${body.baseVersion}; look at the part updates again.`)
  const all = await pendingUpdates(db, actor.workspaceId, storedSummary(v))
  const unknown = (body.parts ?? []).filter((n) => !all.some((u) => u.name === n))
  if (unknown.length) {
    throw badRequest(`No newer approved version for part${unknown.length === 1 ? '' : 's'} ${unknown.map((n) => `'${n}'`).join(', ')} of version ${v.number}`,
      unknown.map((n) => ({ path: `body.parts.${(body.parts ?? []).indexOf(n)}`, message: `part '${n}' has no newer approved version` })))
  }
  const updates = body.parts ? all.filter((u) => body.parts!.includes(u.name)) : all
  if (!updates.length) throw conflict(`The parts of version ${v.number} of "${m.title}" are at their newest approved versions: nothing to update.`)
  const draft = await saveDraft(db, actor, m.id, { text: repinParts(v.text, pinsOf(updates)), baseVersion: v.number })
  return { draft, updates }
}
