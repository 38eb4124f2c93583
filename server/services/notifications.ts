/**
 * E-mail notifications about work: "your fit finished/failed" (when the run's creator has
 * notify_on_fit on) and "your model was forked" (to the source model's owner and maintainers).
 */
import { and, eq, inArray, ne } from 'drizzle-orm'
import type { Db } from '../db/client'
import type { Mailer } from '../mail/mailer'
import { memberships, modelMaintainers, models, modelVersions, projects, runs, users, workspaces } from '../db/schema'
import { changesRequestedMail, fitSettledMail, modelForkedMail, reviewRequestedMail } from '../mail/templates'
import { createMailer } from '../mail/mailer'
import { describeOutcome } from '../../shared/api/fit'
import { can, type Role } from '../../shared/api/auth'

export interface NotifyEnv { db: Db; mailer: Mailer; publicUrl: string }

const link = (env: NotifyEnv, path: string) => `${env.publicUrl.replace(/\/$/, '')}${path}`

/** After a run is final: mails its creator when it succeeded or failed (not when cancelled). Returns whether a mail went out. */
export async function notifyRunSettled(env: NotifyEnv, runId: number): Promise<boolean> {
  const [row] = await env.db
    .select({ status: runs.status, outcome: runs.outcome, convergedBy: runs.convergedBy, error: runs.error, projectId: runs.projectId, project: projects.name, model: models.title, ws: workspaces.slug, email: users.email, notify: users.notifyOnFit })
    .from(runs)
    .innerJoin(projects, eq(projects.id, runs.projectId))
    .innerJoin(models, eq(models.id, runs.modelId))
    .innerJoin(workspaces, eq(workspaces.id, runs.workspaceId))
    .innerJoin(users, eq(users.id, runs.createdBy))
    .where(eq(runs.id, runId)).limit(1)
  if (!row || !row.notify || (row.status !== 'succeeded' && row.status !== 'failed')) return false
  return env.mailer.send(fitSettledMail({
    to: row.email, runId, status: row.status, outcome: row.outcome ? describeOutcome(row.outcome, row.convergedBy) : null, project: row.project, model: row.model, error: row.error,
    link: link(env, `/w/${row.ws}/runs/${runId}`),
  }))
}

/**
 * For the library: call after a fork is stored. Mails the owner and maintainers of the source model,
 * except the person who forked it. Returns the number of messages sent.
 */
export async function notifyForked(env: NotifyEnv, o: { sourceModelId: number; forkModelId: number; forkedBy: number }): Promise<number> {
  const [source] = await env.db.select({ title: models.title, ownerId: models.ownerId }).from(models).where(eq(models.id, o.sourceModelId))
  const [fork] = await env.db.select({ title: models.title, slug: models.slug, ws: workspaces.slug, wsName: workspaces.name })
    .from(models).innerJoin(workspaces, eq(workspaces.id, models.workspaceId)).where(eq(models.id, o.forkModelId))
  const [by] = await env.db.select({ name: users.name }).from(users).where(eq(users.id, o.forkedBy))
  if (!source || !fork) return 0
  const maint = await env.db.select({ userId: modelMaintainers.userId }).from(modelMaintainers).where(eq(modelMaintainers.modelId, o.sourceModelId))
  const ids = [...new Set([source.ownerId, ...maint.map((m) => m.userId)])].filter((id) => id !== o.forkedBy)
  if (!ids.length) return 0
  const to = await env.db.select({ email: users.email }).from(users).where(and(inArray(users.id, ids), ne(users.id, o.forkedBy)))
  let sent = 0
  for (const u of to) {
    const ok = await env.mailer.send(modelForkedMail({
      to: u.email, model: source.title, fork: fork.title, workspace: fork.wsName, by: by?.name ?? 'Someone',
      link: link(env, `/w/${fork.ws}/library/${fork.slug}`),
    }))
    if (ok) sent++
  }
  return sent
}

async function versionInfo(env: NotifyEnv, modelId: number, version: number) {
  const [row] = await env.db.select({ title: models.title, workspaceId: models.workspaceId, ws: workspaces.slug, wsName: workspaces.name, authorId: modelVersions.authorId })
    .from(models).innerJoin(workspaces, eq(workspaces.id, models.workspaceId))
    .innerJoin(modelVersions, and(eq(modelVersions.modelId, models.id), eq(modelVersions.number, version)))
    .where(eq(models.id, modelId)).limit(1)
  return row ?? null
}

/**
 * After a review request is stored: mails every member who may approve (reviewers and admins),
 * except the person who asked. Returns the number of messages sent.
 */
export async function notifyReviewRequested(env: NotifyEnv, o: { modelId: number; version: number; requestedBy: number; comment: string }): Promise<number> {
  const v = await versionInfo(env, o.modelId, o.version)
  if (!v) return 0
  const [by] = await env.db.select({ name: users.name }).from(users).where(eq(users.id, o.requestedBy))
  const members = await env.db.select({ email: users.email, role: memberships.role }).from(memberships)
    .innerJoin(users, eq(users.id, memberships.userId))
    .where(and(eq(memberships.workspaceId, v.workspaceId), ne(memberships.userId, o.requestedBy)))
  let sent = 0
  for (const u of members.filter((x) => can.approve(x.role as Role))) {
    const ok = await env.mailer.send(reviewRequestedMail({
      to: u.email, model: v.title, version: o.version, workspace: v.wsName, by: by?.name ?? 'Someone', comment: o.comment,
      link: link(env, `/w/${v.ws}/library/${o.modelId}?tab=history`),
    }))
    if (ok) sent++
  }
  return sent
}

/** After changes are requested: mails the version's author (unless they asked for the changes themselves). */
export async function notifyChangesRequested(env: NotifyEnv, o: { modelId: number; version: number; by: number; comment: string }): Promise<number> {
  const v = await versionInfo(env, o.modelId, o.version)
  if (!v || v.authorId === o.by) return 0
  const [author] = await env.db.select({ email: users.email }).from(users).where(eq(users.id, v.authorId))
  const [by] = await env.db.select({ name: users.name }).from(users).where(eq(users.id, o.by))
  if (!author) return 0
  const ok = await env.mailer.send(changesRequestedMail({
    to: author.email, model: v.title, version: o.version, by: by?.name ?? 'A reviewer', comment: o.comment,
    link: link(env, `/w/${v.ws}/library/${o.modelId}?tab=history`),
  }))
  return ok ? 1 : 0
}

/** The environment for the functions above from an app context: `notifyForked(notifyEnvOf(ctx(req)), {...})`. */
export function notifyEnvOf(context: { db: Db; config: { publicUrl: string; smtpUrl: string | null; mailFrom: string; fakeSmtpPort: number }; services: Record<string, unknown> }): NotifyEnv {
  let mailer = context.services.mailer as Mailer | undefined
  if (!mailer) {
    mailer = createMailer(context.config)
    context.services.mailer = mailer
  }
  return { db: context.db, mailer, publicUrl: context.config.publicUrl }
}
