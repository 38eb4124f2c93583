/**
 * Review of model versions: a maintainer asks for a review (reviewers are mailed by the route), a
 * reviewer approves (models.ts approveVersion: the four-eyes rule) or asks for changes with a
 * comment; every step is kept with its comment in the version's history. The queue lists the
 * versions awaiting review. None of this changes a model's "changed" date: review records a
 * judgement of an existing text.
 */
import { and, asc, eq, inArray } from 'drizzle-orm'
import type { Db } from '../db/client'
import { models, modelVersions, users, versionReviews } from '../db/schema'
import { conflict, forbidden } from '../errors'
import { can } from '../../shared/api/auth'
import type { ReviewQueueReply, VersionDto } from '../../shared/api/models'
import { audit } from './audit'
import { assertMaintainer, getModelRow, toVersion, versionRow, type Actor } from './models'
import { fourEyesRule } from './workspace-settings'

/** A maintainer (or an admin) asks for a review of a version not approved yet. */
export async function requestReview(db: Db, actor: Actor, modelId: number, number: number, comment: string): Promise<VersionDto> {
  const v = await db.transaction(async (tx) => {
    const m = await getModelRow(tx, actor.workspaceId, modelId, true)
    await assertMaintainer(tx, actor, m)
    const row = await versionRow(tx, m.id, number)
    if (row.status === 'approved') throw conflict(`Version ${number} of "${m.title}" is already approved.`)
    if (row.review === 'requested') throw conflict(`A review of version ${number} of "${m.title}" is already requested.`)
    const [u] = await tx.update(modelVersions).set({ review: 'requested' }).where(eq(modelVersions.id, row.id)).returning()
    await tx.insert(versionReviews).values({ versionId: row.id, actorId: actor.userId, action: 'requested', comment })
    return u
  })
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.review-requested', target: `model:${modelId}`, details: { version: number }, ip: actor.ip })
  return toVersion(db, v)
}

/** A reviewer (or an admin) sends a version back with what should change. */
export async function requestChanges(db: Db, actor: Actor, modelId: number, number: number, comment: string): Promise<VersionDto> {
  if (!can.approve(actor.role)) throw forbidden(`Your role (${actor.role}) does not allow this: it needs the reviewer or admin role.`)
  const v = await db.transaction(async (tx) => {
    const m = await getModelRow(tx, actor.workspaceId, modelId, true)
    const row = await versionRow(tx, m.id, number)
    if (row.status === 'approved') throw conflict(`Version ${number} of "${m.title}" is already approved: publish a new version instead.`)
    const [u] = await tx.update(modelVersions).set({ review: 'changes-requested' }).where(eq(modelVersions.id, row.id)).returning()
    await tx.insert(versionReviews).values({ versionId: row.id, actorId: actor.userId, action: 'changes-requested', comment })
    return u
  })
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.changes-requested', target: `model:${modelId}`, details: { version: number, comment }, ip: actor.ip })
  return toVersion(db, v)
}

/** Versions awaiting review in the workspace, oldest request first. */
export async function reviewQueue(db: Db, actor: Actor): Promise<ReviewQueueReply> {
  const rows = await db.select({ v: modelVersions, m: { id: models.id, slug: models.slug, title: models.title }, author: { id: users.id, name: users.name, email: users.email } })
    .from(modelVersions).innerJoin(models, eq(models.id, modelVersions.modelId)).innerJoin(users, eq(users.id, modelVersions.authorId))
    .where(and(eq(models.workspaceId, actor.workspaceId), eq(modelVersions.review, 'requested'), eq(modelVersions.status, 'draft')))
  if (!rows.length) return { items: [] }
  // the request that put each version in the queue: its latest 'requested' step
  const steps = await db.select({ r: versionReviews, name: users.name, email: users.email }).from(versionReviews)
    .leftJoin(users, eq(users.id, versionReviews.actorId))
    .where(and(inArray(versionReviews.versionId, rows.map((r) => r.v.id)), eq(versionReviews.action, 'requested')))
    .orderBy(asc(versionReviews.createdAt), asc(versionReviews.id))
  const lastAsk = new Map(steps.map((s) => [s.r.versionId, s]))
  const fourEyes = await fourEyesRule(db, actor.workspaceId)
  const items = rows.map(({ v, m, author }) => {
    const ask = lastAsk.get(v.id)
    return {
      model: m, version: v.number, note: v.note, author,
      requestedBy: ask?.r.actorId && ask.name !== null ? { id: ask.r.actorId, name: ask.name, email: ask.email ?? '' } : null,
      requestedAt: (ask?.r.createdAt ?? v.createdAt).toISOString(), comment: ask?.r.comment ?? '',
      ownWork: fourEyes && v.authorId === actor.userId,
    }
  })
  items.sort((a, b) => a.requestedAt.localeCompare(b.requestedAt))
  return { items }
}
