/**
 * Deleting runs, datasets and projects. Each is refused (409, the dependents named in the message and
 * in `details`) while something depends on it:
 * - a run: while it is queued or running (cancel it first), or while a model version was published
 *   from its estimates (that version's provenance points at it);
 * - a dataset: while a run fitted or validated on it, or a conditioned dataset was made from it;
 * - a project: while it holds runs or datasets (its bindings and saved parameter sets go with it).
 * Saved parameter sets keep their values when the run they came from is deleted.
 */
import { and, eq, or, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { datasets, models, modelVersions, projects, runs } from '../db/schema'
import { conflict, notFound } from '../errors'

const ACTIVE = ['queued', 'running']
const LISTED = 10

/** "a, b, c and 4 more" */
function list(items: string[]): string {
  if (items.length <= LISTED) return items.join(', ')
  return `${items.slice(0, LISTED).join(', ')} and ${items.length - LISTED} more`
}

const runLabel = (r: { id: number; settings: unknown }) => {
  const name = (r.settings as { name?: string } | null)?.name
  return name && name !== `Run ${r.id}` ? `run ${r.id} '${name}'` : `run ${r.id}`
}

export async function deleteRun(db: Db, workspaceId: number, runId: number): Promise<void> {
  const [r] = await db.select({ id: runs.id, status: runs.status, settings: runs.settings }).from(runs)
    .where(and(eq(runs.id, runId), eq(runs.workspaceId, workspaceId))).limit(1)
  if (!r) throw notFound('Run')
  if (ACTIVE.includes(r.status)) throw conflict(`Run ${runId} is ${r.status}: cancel it first, then delete it.`, { status: r.status })
  const published = await db.select({ number: modelVersions.number, title: models.title }).from(modelVersions)
    .innerJoin(models, eq(models.id, modelVersions.modelId)).where(eq(modelVersions.fromRunId, runId))
  if (published.length) {
    throw conflict(`Run ${runId} cannot be deleted: ${list(published.map((v) => `version ${v.number} of "${v.title}"`))} ${published.length === 1 ? 'was' : 'were'} published from its estimates and refer${published.length === 1 ? 's' : ''} to it.`,
      { modelVersions: published })
  }
  await db.delete(runs).where(and(eq(runs.id, runId), eq(runs.workspaceId, workspaceId), sql`${runs.status} not in ('queued', 'running')`))
}

/** Runs whose estimation or validation datasets include one of `ids`. */
function runsUsing(db: Db, ids: number[]) {
  const uses = ids.map((id) => sql`(${runs.settings} -> 'estimation') @> ${JSON.stringify([id])}::jsonb or (${runs.settings} -> 'validation') @> ${JSON.stringify([id])}::jsonb`)
  return db.select({ id: runs.id, settings: runs.settings }).from(runs).where(or(...uses)).orderBy(runs.id)
}

export async function deleteDataset(db: Db, workspaceId: number, datasetId: number): Promise<void> {
  const [d] = await db.select({ id: datasets.id, name: datasets.name }).from(datasets)
    .where(and(eq(datasets.id, datasetId), eq(datasets.workspaceId, workspaceId))).limit(1)
  if (!d) throw notFound('Dataset')
  const usedBy = await runsUsing(db, [datasetId])
  const children = await db.select({ id: datasets.id, name: datasets.name }).from(datasets).where(eq(datasets.parentId, datasetId)).orderBy(datasets.id)
  if (usedBy.length || children.length) {
    const parts = [
      usedBy.length ? `${usedBy.length === 1 ? 'fit run' : `${usedBy.length} fit runs`} (${list(usedBy.map(runLabel))})` : null,
      children.length ? `${children.length === 1 ? 'the conditioned dataset' : `${children.length} conditioned datasets`} ${list(children.map((c) => `${c.id} '${c.name}'`))}` : null,
    ].filter(Boolean)
    throw conflict(`Dataset '${d.name}' cannot be deleted: ${parts.join(' and ')} ${usedBy.length + children.length === 1 ? 'depends' : 'depend'} on it. Delete those first.`,
      { runs: usedBy.map((r) => r.id), datasets: children.map((c) => c.id) })
  }
  await db.delete(datasets).where(and(eq(datasets.id, datasetId), eq(datasets.workspaceId, workspaceId)))
}

export async function deleteProject(db: Db, workspaceId: number, projectId: number): Promise<void> {
  const [p] = await db.select({ id: projects.id, name: projects.name }).from(projects)
    .where(and(eq(projects.id, projectId), eq(projects.workspaceId, workspaceId))).limit(1)
  if (!p) throw notFound('Project')
  const rs = await db.select({ id: runs.id, settings: runs.settings }).from(runs).where(eq(runs.projectId, projectId)).orderBy(runs.id)
  const ds = await db.select({ id: datasets.id, name: datasets.name }).from(datasets).where(eq(datasets.projectId, projectId)).orderBy(datasets.id)
  if (rs.length || ds.length) {
    const parts = [
      rs.length ? `${rs.length} fit run${rs.length === 1 ? '' : 's'} (${list(rs.map(runLabel))})` : null,
      ds.length ? `${ds.length} dataset${ds.length === 1 ? '' : 's'} (${list(ds.map((x) => `'${x.name}'`))})` : null,
    ].filter(Boolean)
    throw conflict(`Project '${p.name}' cannot be deleted: it still holds ${parts.join(' and ')}. Delete those first.`,
      { runs: rs.map((r) => r.id), datasets: ds.map((x) => x.id) })
  }
  // bindings and saved parameter sets belong to the project and go with it (foreign keys cascade)
  await db.delete(projects).where(and(eq(projects.id, projectId), eq(projects.workspaceId, workspaceId), sql`not exists (select 1 from ${runs} where ${runs.projectId} = ${projectId})`))
}

