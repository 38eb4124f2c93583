/**
 * The shared model library: models with owners and maintainers, immutable numbered versions,
 * one working draft per user and model, review (approval), forks with lineage, diffs and deletion.
 *
 * Publishing takes a row lock on the model (SELECT … FOR UPDATE) inside a transaction, so two
 * publishes on the same base are serialised: the first creates the next number, the second sees
 * that its base is no longer the latest and gets 409 with the latest version. The unique index on
 * (model_id, number) stands behind it (a violation is answered with the same 409).
 */
import { and, asc, desc, eq, inArray, sql, type SQL } from 'drizzle-orm'
import type { Db } from '../db/client'
import { bindings, memberships, modelDrafts, modelMaintainers, models, modelVersions, parameterSets, projects, runs, users, versionReviews } from '../db/schema'
import { conflict, forbidden, HttpError, notFound } from '../errors'
import { audit } from './audit'
import { checkSheet } from './sheet-check'
import { recordParts, usersOf, workspaceParts } from './part-library'
import { diffLines, diffParameters } from './diff'
import { slugify } from './workspaces'
import { fourEyesRule } from './workspace-settings'
import { errorCodes } from '../../shared/api/errors'
import { can, type Role } from '../../shared/api/auth'
import {
  emptySheetSummary, sheetSummary, type CreateModelBody, type DiffQuery, type DiffReply, type DraftDto, type ForkBody, type ForkDto,
  type ListModelsQuery, type ListModelsReply, type ModelDetailDto, type ModelListItemDto, type PersonDto,
  type PublishBody, type ReviewEntryDto, type ReviewState, type SaveDraftBody, type SetMaintainersBody, type SheetSummary, type UpdateModelBody,
  type VersionDto, type VersionMetaDto, type VersionStatus,
} from '../../shared/api/models'

/** Who is acting, in which workspace. */
export interface Actor {
  userId: number
  workspaceId: number
  role: Role
  ip?: string
}

type Tx = Parameters<Parameters<Db['transaction']>[0]>[0]
type Conn = Db | Tx
type ModelRow = typeof models.$inferSelect
type VersionRow = typeof modelVersions.$inferSelect

// ── helpers ─────────────────────────────────────────────────────────────────────────────────────
const iso = (d: Date | string | null) => (d === null ? null : new Date(d).toISOString())

async function people(db: Conn, ids: (number | null | undefined)[]): Promise<Map<number, PersonDto>> {
  const want = [...new Set(ids.filter((x): x is number => typeof x === 'number'))]
  if (!want.length) return new Map()
  const rows = await db.select({ id: users.id, name: users.name, email: users.email }).from(users).where(inArray(users.id, want))
  return new Map(rows.map((r) => [r.id, r]))
}
const unknownPerson = (id: number): PersonDto => ({ id, name: 'former member', email: '' })
const person = (map: Map<number, PersonDto>, id: number) => map.get(id) ?? unknownPerson(id)

/** The review history of these versions (oldest first), by version id. */
export async function reviewHistory(db: Conn, versionIds: number[]): Promise<Map<number, ReviewEntryDto[]>> {
  const out = new Map<number, ReviewEntryDto[]>()
  if (!versionIds.length) return out
  const rows = await db.select({ r: versionReviews, name: users.name, email: users.email }).from(versionReviews)
    .leftJoin(users, eq(users.id, versionReviews.actorId))
    .where(inArray(versionReviews.versionId, versionIds)).orderBy(asc(versionReviews.createdAt), asc(versionReviews.id))
  for (const { r, name, email } of rows) {
    const list = out.get(r.versionId) ?? []
    list.push({
      action: r.action as ReviewEntryDto['action'], comment: r.comment, at: iso(r.createdAt)!,
      by: r.actorId !== null && name !== null ? { id: r.actorId, name, email: email ?? '' } : null,
    })
    out.set(r.versionId, list)
  }
  return out
}

function toVersionMeta(v: VersionRow, p: Map<number, PersonDto>, reviews: Map<number, ReviewEntryDto[]> = new Map()): VersionMetaDto {
  return {
    review: v.status === 'approved' ? null : (v.review as ReviewState | null),
    reviews: reviews.get(v.id) ?? [],
    number: v.number,
    note: v.note,
    author: person(p, v.authorId),
    createdAt: iso(v.createdAt)!,
    status: v.status as VersionStatus,
    approvedBy: v.approvedBy ? person(p, v.approvedBy) : null,
    approvedAt: iso(v.approvedAt),
    fromRunId: v.fromRunId,
  }
}

export function storedSummary(v: VersionRow): SheetSummary {
  const r = sheetSummary.safeParse(v.summary)
  return r.success ? r.data : emptySheetSummary()
}

export async function toVersion(db: Conn, v: VersionRow): Promise<VersionDto> {
  const p = await people(db, [v.authorId, v.approvedBy])
  return { ...toVersionMeta(v, p, await reviewHistory(db, [v.id])), modelId: v.modelId, text: v.text, summary: storedSummary(v) }
}

/** The model of this workspace; 404 for a missing model or another workspace's. */
export async function getModelRow(db: Conn, workspaceId: number, modelId: number, lock = false): Promise<ModelRow> {
  const q = db.select().from(models).where(and(eq(models.id, modelId), eq(models.workspaceId, workspaceId))).limit(1)
  const [m] = lock ? await q.for('update') : await q
  if (!m) throw notFound('Model')
  return m
}

async function latestNumber(db: Conn, modelId: number): Promise<number> {
  const [r] = await db.select({ n: sql<number>`coalesce(max(${modelVersions.number}), 0)::int` }).from(modelVersions).where(eq(modelVersions.modelId, modelId))
  return r.n
}

export async function versionRow(db: Conn, modelId: number, number: number | 'latest'): Promise<VersionRow> {
  const q = db.select().from(modelVersions)
  const [v] = number === 'latest'
    ? await q.where(eq(modelVersions.modelId, modelId)).orderBy(desc(modelVersions.number)).limit(1)
    : await q.where(and(eq(modelVersions.modelId, modelId), eq(modelVersions.number, number))).limit(1)
  if (!v) throw notFound(number === 'latest' ? 'Model version' : `Version ${number}`)
  return v
}

async function isMaintainer(db: Conn, modelId: number, userId: number): Promise<boolean> {
  const r = await db.select({ u: modelMaintainers.userId }).from(modelMaintainers)
    .where(and(eq(modelMaintainers.modelId, modelId), eq(modelMaintainers.userId, userId))).limit(1)
  return r.length > 0
}

/** A shipped template is not edited in the library (editor, draft, details): it is forked. */
export async function assertNotTemplate(db: Db, actor: Actor, modelId: number): Promise<void> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  if (m.template) throw conflict(`"${m.title}" is a template shipped with Pewter and is read-only: fork it (New model → A template) to make a model of your own.`)
}

/** Publishing and editing a model: a modeler who maintains it, or an admin. */
export async function assertMaintainer(db: Conn, actor: Actor, m: ModelRow) {
  if (actor.role === 'admin') return
  if (!can.write(actor.role)) throw forbidden(`Your role (${actor.role}) does not allow this: it needs the modeler or admin role.`)
  if (!(await isMaintainer(db, m.id, actor.userId))) {
    throw forbidden(`You do not maintain "${m.title}": ask its owner to add you as a maintainer, or fork it into a model of your own.`)
  }
}

/** A slug not used by another model of the workspace. */
async function uniqueModelSlug(db: Conn, workspaceId: number, title: string): Promise<string> {
  const root = slugify(title).slice(0, 70) || 'model'
  const taken = await db.select({ slug: models.slug }).from(models)
    .where(and(eq(models.workspaceId, workspaceId), sql`${models.slug} like ${root + '%'}`))
  const set = new Set(taken.map((t) => t.slug))
  for (let i = 1; ; i++) {
    const slug = i === 1 ? root : `${root}-${i}`
    if (!set.has(slug)) return slug
  }
}

/** The sheet must check without errors; otherwise 400 with every diagnostic. */
async function requireCleanSheet(db: Conn, workspaceId: number, text: string): Promise<SheetSummary> {
  const r = checkSheet(text, await workspaceParts(db, workspaceId, text))
  const errors = r.diagnostics.filter((d) => d.severity === 'error')
  if (!errors.length && !r.summary) throw new Error('the sheet checker returned a summary of an unexpected shape')
  if (errors.length || !r.summary) {
    const first = errors[0]
    const where = first ? `; the first at line ${first.line}, column ${first.column}: ${first.message}` : ''
    throw new HttpError(400, errorCodes.validation,
      `The sheet has ${errors.length} error${errors.length === 1 ? '' : 's'}${where}. Fix them before publishing.`,
      { diagnostics: r.diagnostics })
  }
  return r.summary
}

const isUniqueViolation = (e: unknown) => {
  const err = e as { code?: string; cause?: { code?: string } }
  return err?.code === '23505' || err?.cause?.code === '23505'
}

// ── list ────────────────────────────────────────────────────────────────────────────────────────
// written with the table's name in full: inside a sub-select drizzle would render a bare "id"
const latestSub = sql<number>`(select coalesce(max(v.number), 0) from model_versions v where v.model_id = "models"."id")::int`
const statusSub = sql<string>`coalesce((select v.status from model_versions v where v.model_id = "models"."id" order by v.number desc limit 1), 'draft')`
const forkCountSub = sql<number>`(select count(*) from models f where f.fork_of_model_id = "models"."id")::int`

export async function listModels(db: Db, actor: Actor, q: ListModelsQuery): Promise<ListModelsReply> {
  const where: SQL[] = [eq(models.workspaceId, actor.workspaceId)]
  if (q.q) {
    const like = `%${q.q.replace(/[\\%_]/g, (c) => '\\' + c)}%`
    where.push(sql`(${models.title} ilike ${like} or ${models.description} ilike ${like} or ${models.slug} ilike ${like} or exists (select 1 from unnest(${models.tags}) tg where tg ilike ${like}))`)
  }
  if (q.tag) where.push(sql`${q.tag} = any(${models.tags})`)
  if (q.owner !== undefined) where.push(eq(models.ownerId, q.owner === 'me' ? actor.userId : q.owner))
  if (q.status) where.push(sql`${statusSub} = ${q.status}`)
  const cond = and(...where)

  const rows = await db.select({
    m: models, latest: latestSub, status: statusSub, forkCount: forkCountSub, total: sql<number>`(count(*) over ())::int`,
  }).from(models).where(cond).orderBy(desc(models.updatedAt), desc(models.id)).limit(q.pageSize).offset((q.page - 1) * q.pageSize)

  const origins = await originRefs(db, rows.map((r) => r.m))
  const p = await people(db, rows.map((r) => r.m.ownerId))
  const items: ModelListItemDto[] = rows.map((r) => listItem(r.m, r.latest, r.status as VersionStatus, r.forkCount, p, origins))

  let total = rows[0]?.total ?? 0
  if (!rows.length && q.page > 1) {
    const [c] = await db.select({ n: sql<number>`count(*)::int` }).from(models).where(cond)
    total = c.n
  }
  const tagRows = await db.execute<{ tag: string }>(sql`select distinct unnest(tags) as tag from models where workspace_id = ${actor.workspaceId} order by 1`)
  const ownerRows = await db.selectDistinct({ id: users.id, name: users.name, email: users.email }).from(models)
    .innerJoin(users, eq(users.id, models.ownerId)).where(eq(models.workspaceId, actor.workspaceId)).orderBy(users.name)
  return { items, total, page: q.page, pageSize: q.pageSize, tags: tagRows.rows.map((r) => r.tag), owners: ownerRows }
}

async function originRefs(db: Conn, rows: ModelRow[]) {
  const ids = [...new Set(rows.map((r) => r.forkOfModelId).filter((x): x is number => x !== null))]
  if (!ids.length) return new Map<number, { id: number; slug: string; title: string }>()
  const o = await db.select({ id: models.id, slug: models.slug, title: models.title }).from(models).where(inArray(models.id, ids))
  return new Map(o.map((r) => [r.id, r]))
}

function listItem(m: ModelRow, latest: number, status: VersionStatus, forkCount: number, p: Map<number, PersonDto>,
  origins: Map<number, { id: number; slug: string; title: string }>): ModelListItemDto {
  const origin = m.forkOfModelId !== null ? origins.get(m.forkOfModelId) : undefined
  return {
    id: m.id, slug: m.slug, title: m.title, description: m.description, tags: m.tags, owner: person(p, m.ownerId),
    template: m.template, latestVersion: latest, status, updatedAt: iso(m.updatedAt)!, forkCount,
    forkOf: origin ? { ...origin, version: m.forkOfVersion ?? 1 } : null,
  }
}

// ── detail ──────────────────────────────────────────────────────────────────────────────────────
export async function getModel(db: Conn, actor: Actor, modelId: number): Promise<ModelDetailDto> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  const versions = await db.select().from(modelVersions).where(eq(modelVersions.modelId, m.id)).orderBy(desc(modelVersions.number))
  const maint = await db.select({ id: modelMaintainers.userId }).from(modelMaintainers).where(eq(modelMaintainers.modelId, m.id))
  const forks = await db.select().from(models).where(and(eq(models.forkOfModelId, m.id), eq(models.workspaceId, actor.workspaceId))).orderBy(asc(models.createdAt))
  const [draft] = await db.select().from(modelDrafts).where(and(eq(modelDrafts.modelId, m.id), eq(modelDrafts.userId, actor.userId))).limit(1)
  const p = await people(db, [m.ownerId, ...versions.flatMap((v) => [v.authorId, v.approvedBy]), ...maint.map((x) => x.id), ...forks.map((f) => f.ownerId)])
  const origins = await originRefs(db, [m])
  const latest = versions[0]?.number ?? 0
  const status = (versions[0]?.status ?? 'draft') as VersionStatus
  const maintains = maint.some((x) => x.id === actor.userId)
  let originLatestVersion: number | null = null
  if (m.forkOfModelId !== null && origins.has(m.forkOfModelId)) originLatestVersion = await latestNumber(db, m.forkOfModelId)
  const forkDtos: ForkDto[] = forks.map((f) => ({
    id: f.id, slug: f.slug, title: f.title, owner: person(p, f.ownerId), fromVersion: f.forkOfVersion ?? 1, createdAt: iso(f.createdAt)!,
  }))
  const admin = actor.role === 'admin'
  const reviews = await reviewHistory(db, versions.map((v) => v.id))
  const usedIn = (await usersOf(db, m.id)).map((u) => ({ model: { id: u.modelId, slug: u.slug, title: u.title }, version: u.version, partVersion: u.partVersion }))
  return {
    ...listItem(m, latest, status, forks.length, p, origins),
    usedIn,
    createdAt: iso(m.createdAt)!,
    maintainers: maint.map((x) => person(p, x.id)).sort((a, b) => a.name.localeCompare(b.name)),
    versions: versions.map((v) => toVersionMeta(v, p, reviews)),
    forks: forkDtos,
    draft: draft ? { text: draft.text, baseVersion: draft.baseVersion, updatedAt: iso(draft.updatedAt)! } : null,
    can: {
      // a shipped template is read-only for everyone: fork it to change it
      publish: !m.template && (admin || (can.write(actor.role) && maintains)),
      edit: !m.template && (admin || (can.write(actor.role) && maintains)),
      approve: can.approve(actor.role),
      fork: can.write(actor.role),
      remove: can.administer(actor.role),
    },
    originLatestVersion,
  }
}

export async function getVersion(db: Db, actor: Actor, modelId: number, number: number | 'latest'): Promise<VersionDto> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  return toVersion(db, await versionRow(db, m.id, number))
}

// ── create ──────────────────────────────────────────────────────────────────────────────────────
interface NewModel {
  title: string
  description: string
  tags: string[]
  text: string
  note: string
  summary: SheetSummary
  ownerId: number
  template?: string | null
  forkOf?: { modelId: number; version: number }
}

async function insertModel(tx: Tx, workspaceId: number, nm: NewModel): Promise<ModelRow> {
  const tags = [...new Set(nm.tags)]
  for (let attempt = 0; ; attempt++) {
    const slug = await uniqueModelSlug(tx, workspaceId, nm.title)
    try {
      const [m] = await tx.insert(models).values({
        workspaceId, ownerId: nm.ownerId, slug, title: nm.title, description: nm.description, tags, template: nm.template ?? null,
        forkOfModelId: nm.forkOf?.modelId ?? null, forkOfVersion: nm.forkOf?.version ?? null,
      }).onConflictDoNothing().returning()
      if (!m) { if (attempt < 5) continue; throw conflict('Could not find a free name for the model; try another title.') }
      await tx.insert(modelMaintainers).values({ modelId: m.id, userId: nm.ownerId })
      const [v] = await tx.insert(modelVersions).values({ modelId: m.id, number: 1, text: nm.text, note: nm.note, authorId: nm.ownerId, summary: nm.summary, status: 'draft' }).returning()
      await recordParts(tx, workspaceId, v.id, nm.summary)
      return m
    } catch (e) {
      if (isUniqueViolation(e) && attempt < 5) continue
      throw e
    }
  }
}

export async function createModel(db: Db, actor: Actor, body: CreateModelBody): Promise<ModelDetailDto> {
  const summary = await requireCleanSheet(db, actor.workspaceId, body.text)
  const m = await db.transaction((tx) => insertModel(tx, actor.workspaceId, {
    title: body.title, description: body.description, tags: body.tags, text: body.text, note: body.note || 'First version', summary, ownerId: actor.userId,
  }))
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.created', target: `model:${m.id}`, details: { title: m.title }, ip: actor.ip })
  return getModel(db, actor, m.id)
}

/** Used by the template loader: inserts a model with version 1 (no audit event, no role check). */
export async function insertLibraryModel(db: Db, workspaceId: number, nm: NewModel): Promise<ModelRow> {
  return db.transaction((tx) => insertModel(tx, workspaceId, nm))
}

// ── edit the model's card and maintainers ──────────────────────────────────────────────────────
export async function updateModel(db: Db, actor: Actor, modelId: number, body: UpdateModelBody): Promise<ModelDetailDto> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  await assertMaintainer(db, actor, m)
  await db.update(models).set({
    ...(body.title !== undefined ? { title: body.title } : {}),
    ...(body.description !== undefined ? { description: body.description } : {}),
    ...(body.tags !== undefined ? { tags: [...new Set(body.tags)] } : {}),
    updatedAt: new Date(),
  }).where(eq(models.id, m.id))
  return getModel(db, actor, m.id)
}

export async function setMaintainers(db: Db, actor: Actor, modelId: number, body: SetMaintainersBody): Promise<ModelDetailDto> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  if (actor.role !== 'admin' && m.ownerId !== actor.userId) throw forbidden('Only the model\'s owner or an admin chooses its maintainers.')
  const ids = [...new Set([m.ownerId, ...body.userIds])]
  const members = await db.select({ userId: memberships.userId, role: memberships.role }).from(memberships)
    .where(and(eq(memberships.workspaceId, actor.workspaceId), inArray(memberships.userId, ids)))
  const roleOf = new Map(members.map((r) => [r.userId, r.role as Role]))
  const issues = body.userIds.flatMap((id, i) => {
    const role = roleOf.get(id)
    if (!role) return [{ path: `body.userIds.${i}`, message: `user ${id} is not a member of this workspace` }]
    if (!can.write(role)) return [{ path: `body.userIds.${i}`, message: `user ${id} is a ${role}: maintainers need the modeler or admin role` }]
    return []
  })
  if (issues.length) throw new HttpError(400, errorCodes.validation, `Invalid body: ${issues.map((x) => `${x.path}: ${x.message}`).join('; ')}`, issues)
  await db.transaction(async (tx) => {
    await tx.delete(modelMaintainers).where(eq(modelMaintainers.modelId, m.id))
    await tx.insert(modelMaintainers).values(ids.map((userId) => ({ modelId: m.id, userId })))
  })
  return getModel(db, actor, m.id)
}

// ── drafts ──────────────────────────────────────────────────────────────────────────────────────
export async function saveDraft(db: Db, actor: Actor, modelId: number, body: SaveDraftBody): Promise<DraftDto> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  const latest = await latestNumber(db, m.id)
  const base = body.baseVersion ?? latest
  if (base > latest) {
    throw new HttpError(400, errorCodes.validation, `Invalid body: body.baseVersion: version ${base} does not exist (the latest is ${latest})`,
      [{ path: 'body.baseVersion', message: `version ${base} does not exist (the latest is ${latest})` }])
  }
  const now = new Date()
  const [d] = await db.insert(modelDrafts).values({ modelId: m.id, userId: actor.userId, text: body.text, baseVersion: base, updatedAt: now })
    .onConflictDoUpdate({ target: [modelDrafts.modelId, modelDrafts.userId], set: { text: body.text, baseVersion: base, updatedAt: now } })
    .returning()
  return { text: d.text, baseVersion: d.baseVersion, updatedAt: iso(d.updatedAt)! }
}

export async function discardDraft(db: Db, actor: Actor, modelId: number): Promise<void> {
  const m = await getModelRow(db, actor.workspaceId, modelId)
  await db.delete(modelDrafts).where(and(eq(modelDrafts.modelId, m.id), eq(modelDrafts.userId, actor.userId)))
}

// ── publish ─────────────────────────────────────────────────────────────────────────────────────
export async function publishVersion(db: Db, actor: Actor, modelId: number, body: PublishBody): Promise<VersionDto> {
  const summary = await requireCleanSheet(db, actor.workspaceId, body.text)
  const latestConflict = async (latest: number) => {
    const v = await toVersion(db, await versionRow(db, modelId, 'latest'))
    return conflict(`Version ${latest} was published after version ${body.baseVersion}, which you edited. Rebase your changes on version ${latest} and publish again.`, { latest: v })
  }
  let created: VersionRow
  try {
    created = await db.transaction(async (tx) => {
      const m = await getModelRow(tx, actor.workspaceId, modelId, true)
      await assertMaintainer(tx, actor, m)
      const latest = await latestNumber(tx, m.id)
      if (body.baseVersion !== latest) {
        if (body.baseVersion > latest) {
          throw new HttpError(400, errorCodes.validation, `Invalid body: body.baseVersion: version ${body.baseVersion} does not exist (the latest is ${latest})`,
            [{ path: 'body.baseVersion', message: `version ${body.baseVersion} does not exist (the latest is ${latest})` }])
        }
        throw await latestConflict(latest)
      }
      const [v] = await tx.insert(modelVersions).values({
        modelId: m.id, number: latest + 1, text: body.text, note: body.note, authorId: actor.userId, summary, status: 'draft',
      }).returning()
      await recordParts(tx, actor.workspaceId, v.id, summary)
      await tx.update(models).set({ updatedAt: new Date() }).where(eq(models.id, m.id))
      await tx.delete(modelDrafts).where(and(eq(modelDrafts.modelId, m.id), eq(modelDrafts.userId, actor.userId)))
      return v
    })
  } catch (e) {
    if (isUniqueViolation(e)) throw await latestConflict(await latestNumber(db, modelId))
    throw e
  }
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.published', target: `model:${modelId}`, details: { version: created.number, note: created.note }, ip: actor.ip })
  return toVersion(db, created)
}

// ── review ──────────────────────────────────────────────────────────────────────────────────────
/**
 * Approve a version (the four-eyes rule of the workspace holds), with an optional comment kept in
 * the version's review history. Approval records a review of an existing text: the model's
 * "changed" date stays.
 */
export async function approveVersion(db: Db, actor: Actor, modelId: number, number: number, comment = ''): Promise<VersionDto> {
  if (!can.approve(actor.role)) throw forbidden(`Your role (${actor.role}) does not allow this: it needs the reviewer or admin role.`)
  const v = await db.transaction(async (tx) => {
    const m = await getModelRow(tx, actor.workspaceId, modelId, true)
    const row = await versionRow(tx, m.id, number)
    if (row.status === 'approved') throw conflict(`Version ${number} is already approved.`)
    if (row.authorId === actor.userId && await fourEyesRule(tx as unknown as Db, actor.workspaceId)) {
      throw forbidden(`This workspace applies the four-eyes rule: you wrote version ${number}, so another reviewer or admin must approve it.`)
    }
    const [u] = await tx.update(modelVersions).set({ status: 'approved', approvedBy: actor.userId, approvedAt: new Date(), review: null })
      .where(eq(modelVersions.id, row.id)).returning()
    await tx.insert(versionReviews).values({ versionId: row.id, actorId: actor.userId, action: 'approved', comment })
    return u
  })
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.approved', target: `model:${modelId}`, details: { version: number, ...(comment ? { comment } : {}) }, ip: actor.ip })
  return toVersion(db, v)
}

// ── fork ────────────────────────────────────────────────────────────────────────────────────────
export async function forkModel(db: Db, actor: Actor, modelId: number, body: ForkBody): Promise<ModelDetailDto> {
  if (!can.write(actor.role)) throw forbidden(`Your role (${actor.role}) does not allow this: it needs the modeler or admin role.`)
  const origin = await getModelRow(db, actor.workspaceId, modelId)
  const v = await versionRow(db, origin.id, body.version ?? 'latest')
  const m = await db.transaction((tx) => insertModel(tx, actor.workspaceId, {
    title: body.title, description: origin.description, tags: origin.tags.filter((t) => t !== 'template'), text: v.text,
    note: `Forked from "${origin.title}" version ${v.number}`, summary: storedSummary(v), ownerId: actor.userId,
    forkOf: { modelId: origin.id, version: v.number },
  }))
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.forked', target: `model:${m.id}`, details: { from: origin.id, version: v.number }, ip: actor.ip })
  return getModel(db, actor, m.id)
}

// ── diff ────────────────────────────────────────────────────────────────────────────────────────
export async function diffVersions(db: Db, actor: Actor, modelId: number, q: DiffQuery): Promise<DiffReply> {
  const toModel = await getModelRow(db, actor.workspaceId, modelId)
  const fromModel = q.fromModel !== undefined ? await getModelRow(db, actor.workspaceId, q.fromModel) : toModel
  const a = await versionRow(db, fromModel.id, q.from)
  const b = await versionRow(db, toModel.id, q.to)
  const lines = diffLines(a.text, b.text)
  const ref = (m: ModelRow) => ({ id: m.id, slug: m.slug, title: m.title })
  return {
    from: { model: ref(fromModel), version: a.number, text: a.text },
    to: { model: ref(toModel), version: b.number, text: b.text },
    ...lines,
    parameters: diffParameters(storedSummary(a), storedSummary(b)),
  }
}

// ── delete ──────────────────────────────────────────────────────────────────────────────────────
export async function deleteModel(db: Db, actor: Actor, modelId: number): Promise<void> {
  if (!can.administer(actor.role)) throw forbidden(`Your role (${actor.role}) does not allow this: it needs the admin role.`)
  const gone = await db.transaction(async (tx) => {
    const m = await getModelRow(tx, actor.workspaceId, modelId, true)
    const users = (await usersOf(tx, m.id)).filter((u) => u.modelId !== m.id)
    if (users.length) {
      const named = users.map((u) => `"${u.title}" version ${u.version} (uses version ${u.partVersion})`)
      throw conflict(`"${m.title}" cannot be deleted: it is used as a part by ${named.join(', ')}. Update or delete those versions first.`,
        { usedIn: users.map((u) => ({ model: { id: u.modelId, slug: u.slug, title: u.title }, version: u.version, partVersion: u.partVersion })) })
    }
    const used = await tx.select({ version: runs.modelVersion, n: sql<number>`count(*)::int` }).from(runs)
      .where(eq(runs.modelId, m.id)).groupBy(runs.modelVersion).orderBy(runs.modelVersion)
    if (used.length) {
      const n = used.reduce((s, r) => s + r.n, 0)
      const vs = used.map((r) => r.version).join(', ')
      throw conflict(`"${m.title}" cannot be deleted: ${n} fit run${n === 1 ? '' : 's'} use${n === 1 ? 's' : ''} version${used.length === 1 ? '' : 's'} ${vs} of it. Delete those runs first.`,
        { runs: n, versions: used.map((r) => r.version) })
    }
    // bindings and saved parameter sets belong to projects and are deleted with their project
    const [b] = await tx.select({ n: sql<number>`count(*)::int`, projects: sql<string[]>`array_agg(distinct ${projects.name})` }).from(bindings)
      .innerJoin(projects, eq(projects.id, bindings.projectId)).where(eq(bindings.modelId, m.id))
    if (b.n) throw conflict(`"${m.title}" cannot be deleted: ${b.n} binding${b.n === 1 ? '' : 's'} in project${b.projects.length === 1 ? '' : 's'} ${b.projects.map((x) => `'${x}'`).join(', ')} use${b.n === 1 ? 's' : ''} it. Delete ${b.projects.length === 1 ? 'that project' : 'those projects'} first.`, { bindings: b.n, projects: b.projects })
    const [ps] = await tx.select({ n: sql<number>`count(*)::int`, projects: sql<string[]>`array_agg(distinct ${projects.name})` }).from(parameterSets)
      .innerJoin(projects, eq(projects.id, parameterSets.projectId)).where(eq(parameterSets.modelId, m.id))
    if (ps.n) throw conflict(`"${m.title}" cannot be deleted: ${ps.n} saved parameter set${ps.n === 1 ? '' : 's'} in project${ps.projects.length === 1 ? '' : 's'} ${ps.projects.map((x) => `'${x}'`).join(', ')} refer${ps.n === 1 ? 's' : ''} to it. Delete ${ps.projects.length === 1 ? 'that project' : 'those projects'} first.`, { parameterSets: ps.n, projects: ps.projects })
    await tx.delete(models).where(eq(models.id, m.id))
    return { title: m.title, template: m.template }
  })
  // a deleted template is remembered here, so the template loader does not bring it back
  await audit(db, { workspaceId: actor.workspaceId, actorId: actor.userId, action: 'model.deleted', target: `model:${modelId}`,
    details: gone.template ? { title: gone.title, template: gone.template } : { title: gone.title }, ip: actor.ip })
}

