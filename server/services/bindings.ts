/**
 * Bindings: a model version plus the mapping of dataset columns onto the sheet's inputs and outputs.
 *
 * Automatic match: a column matches a signal when their names agree ignoring case, spaces, '-' and '_'.
 * Units: a column whose header names a unit is converted to coherent SI with mathjs (through
 * shared/sheet/units: internal = value·scale + offset, offset units such as degC taken as absolute
 * temperatures); its dimension must equal that of the sheet's unit. A column without a unit is read in
 * the sheet's declared unit. A sheet signal without a unit takes the column's numbers as they are.
 */
import { and, desc, eq, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { bindings, datasets, models, modelVersions } from '../db/schema'
import { badRequest, notFound } from '../errors'
import { autoMatch, checkMapping, type SheetSignals } from '../../shared/data/column-mapping'
import type { BindingDto, BindingFollow, ColumnMapping, ColumnMeta, CreateBindingBody, MappingCheck, UpdateBindingBody } from '../../shared/api/datasets'
import { getProjectRow } from './projects'
import { columnsOf } from './datasets'

export { autoMatch, checkMapping, type SheetSignals, type SignalInfo } from '../../shared/data/column-mapping'
export { conversionFor, type Conversion } from '../../shared/data/signal-columns'

/** The inputs and outputs of a stored version (from its parsed summary). */
export function signalsOf(summary: unknown): SheetSignals {
  const s = (summary ?? {}) as { inputs?: { name: string; unit?: string | null }[]; outputs?: { name: string; unit?: string | null }[] }
  return {
    inputs: (s.inputs ?? []).map((i) => ({ name: i.name, unit: i.unit ?? '' })),
    outputs: (s.outputs ?? []).map((o) => ({ name: o.name, unit: o.unit ?? '' })),
  }
}

/** Rejects mapping keys that name no signal of the sheet. */
export function checkMappingNames(signals: SheetSignals, mapping: ColumnMapping) {
  const details: { path: string; message: string }[] = []
  for (const k of Object.keys(mapping.inputs)) if (!signals.inputs.some((i) => i.name === k)) details.push({ path: `mapping.inputs.${k}`, message: `the sheet has no input named '${k}' (inputs: ${signals.inputs.map((i) => i.name).join(', ') || 'none'})` })
  for (const k of Object.keys(mapping.outputs)) if (!signals.outputs.some((o) => o.name === k)) details.push({ path: `mapping.outputs.${k}`, message: `the sheet has no output named '${k}' (outputs: ${signals.outputs.map((o) => o.name).join(', ') || 'none'})` })
  if (details.length) throw badRequest(details.map((d) => d.message).join('; '), details)
}

/** A model version of this workspace, with its model's title; 404 otherwise. */
export async function getVersionRow(db: Db, workspaceId: number, modelId: number, version: number) {
  const [row] = await db.select({ v: modelVersions, title: models.title })
    .from(modelVersions).innerJoin(models, eq(models.id, modelVersions.modelId))
    .where(and(eq(models.workspaceId, workspaceId), eq(modelVersions.modelId, modelId), eq(modelVersions.number, version)))
    .limit(1)
  if (!row) throw notFound(`Model ${modelId} version ${version}`)
  return row
}

async function datasetColumns(db: Db, projectId: number, datasetId?: number): Promise<ColumnMeta[] | null> {
  const q = db.select({ id: datasets.id, columns: datasets.columns }).from(datasets)
  const rows = datasetId
    ? await q.where(and(eq(datasets.projectId, projectId), eq(datasets.id, datasetId))).limit(1)
    : await q.where(eq(datasets.projectId, projectId)).orderBy(desc(datasets.createdAt)).limit(1)
  if (datasetId && !rows.length) throw notFound('Dataset')
  return rows.length ? columnsOf(rows[0]) : null
}

export async function matchMapping(db: Db, workspaceId: number, projectId: number, body: { modelId: number; version: number; datasetId: number; mapping?: ColumnMapping }) {
  await getProjectRow(db, workspaceId, projectId)
  const { v } = await getVersionRow(db, workspaceId, body.modelId, body.version)
  const signals = signalsOf(v.summary)
  const columns = await datasetColumns(db, projectId, body.datasetId)
  if (body.mapping) checkMappingNames(signals, body.mapping)
  const mapping = autoMatch(signals, (columns ?? []).map((c) => c.name), body.mapping)
  return { mapping, checks: checkMapping(signals, mapping, columns), signals }
}

type BindingRow = typeof bindings.$inferSelect

/**
 * The version a fit of the binding takes by default: the pinned one, the model's latest, or its
 * newest approved (null when none is approved).
 */
export async function resolveFollow(db: Db, modelId: number, follow: BindingFollow, pinned: number): Promise<number | null> {
  if (follow === 'pinned') return pinned
  const [r] = await db.select({
    latest: sql<number | null>`max(${modelVersions.number})::int`,
    approved: sql<number | null>`(max(${modelVersions.number}) filter (where ${modelVersions.status} = 'approved'))::int`,
  }).from(modelVersions).where(eq(modelVersions.modelId, modelId))
  return follow === 'latest' ? (r?.latest ?? pinned) : (r?.approved ?? null)
}

function toDto(b: BindingRow, title: string, resolvedVersion: number | null, checks: MappingCheck[]): BindingDto {
  return {
    id: b.id, projectId: b.projectId, modelId: b.modelId, modelTitle: title, modelVersion: b.modelVersion,
    follow: b.follow as BindingFollow, resolvedVersion, name: b.name,
    mapping: b.mapping as ColumnMapping, checks, createdAt: b.createdAt.toISOString(),
  }
}

/** A binding as the API shows it: its mapping checked against the version it resolves to now. */
async function describeBinding(db: Db, workspaceId: number, b: BindingRow, title: string, columns: ColumnMeta[] | null): Promise<BindingDto> {
  const resolved = await resolveFollow(db, b.modelId, b.follow as BindingFollow, b.modelVersion)
  const { v } = await getVersionRow(db, workspaceId, b.modelId, resolved ?? b.modelVersion)
  return toDto(b, title, resolved, checkMapping(signalsOf(v.summary), b.mapping as ColumnMapping, columns))
}

const refuseProblems = (checks: MappingCheck[]) => {
  const bad = checks.filter((c) => c.problem)
  if (bad.length) throw badRequest(bad.map((c) => `${c.kind} '${c.signal}': ${c.problem}`).join('; '), bad.map((c) => ({ path: `mapping.${c.kind}s.${c.signal}`, message: c.problem })))
}

export async function createBinding(db: Db, workspaceId: number, projectId: number, body: Omit<CreateBindingBody, 'follow'> & { follow?: BindingFollow }) {
  await getProjectRow(db, workspaceId, projectId)
  const { v, title } = await getVersionRow(db, workspaceId, body.modelId, body.version)
  const signals = signalsOf(v.summary)
  const columns = await datasetColumns(db, projectId, body.datasetId)
  if (body.mapping) checkMappingNames(signals, body.mapping)
  const mapping = autoMatch(signals, (columns ?? []).map((c) => c.name), body.mapping)
  refuseProblems(checkMapping(signals, mapping, columns))
  const [row] = await db.insert(bindings).values({
    projectId, modelId: body.modelId, modelVersion: body.version, follow: body.follow ?? 'pinned', name: body.name ?? `${title} v${body.version}`, mapping,
  }).returning()
  return describeBinding(db, workspaceId, row, title, columns)
}

/**
 * Change a binding's name, mapping, pinned version or what it follows. Mapping names must be
 * signals of the (new) pinned version; the reply's checks show unit problems, as the list does.
 */
export async function updateBinding(db: Db, workspaceId: number, projectId: number, bindingId: number, body: UpdateBindingBody) {
  const { row, title } = await getBindingRow(db, workspaceId, projectId, bindingId)
  const version = body.version ?? row.modelVersion
  const { v } = await getVersionRow(db, workspaceId, row.modelId, version)
  const signals = signalsOf(v.summary)
  if (body.mapping) checkMappingNames(signals, body.mapping)
  const old = row.mapping as ColumnMapping
  const mapping = autoMatch(signals, [], { inputs: { ...old.inputs, ...body.mapping?.inputs }, outputs: { ...old.outputs, ...body.mapping?.outputs } })
  const columns = await datasetColumns(db, projectId)
  const [u] = await db.update(bindings).set({ mapping, modelVersion: version, ...(body.follow ? { follow: body.follow } : {}), ...(body.name ? { name: body.name } : {}) })
    .where(eq(bindings.id, row.id)).returning()
  return describeBinding(db, workspaceId, u, title, columns)
}

/** Delete a binding. Runs keep their own copy of the mapping, so they are not affected. */
export async function deleteBinding(db: Db, workspaceId: number, projectId: number, bindingId: number) {
  const { row } = await getBindingRow(db, workspaceId, projectId, bindingId)
  await db.delete(bindings).where(eq(bindings.id, row.id))
  return { deleted: true as const, id: row.id }
}

export async function getBindingRow(db: Db, workspaceId: number, projectId: number, bindingId: number) {
  await getProjectRow(db, workspaceId, projectId)
  const [r] = await db.select({ b: bindings, title: models.title }).from(bindings).innerJoin(models, eq(models.id, bindings.modelId))
    .where(and(eq(bindings.id, bindingId), eq(bindings.projectId, projectId))).limit(1)
  if (!r) throw notFound('Binding')
  return { row: r.b, title: r.title }
}

export async function listBindings(db: Db, workspaceId: number, projectId: number) {
  await getProjectRow(db, workspaceId, projectId)
  const rows = await db.select({ b: bindings, title: models.title }).from(bindings)
    .innerJoin(models, eq(models.id, bindings.modelId))
    .where(eq(bindings.projectId, projectId)).orderBy(desc(bindings.createdAt))
  const columns = await datasetColumns(db, projectId)
  const out: BindingDto[] = []
  for (const r of rows) out.push(await describeBinding(db, workspaceId, r.b, r.title, columns))
  return out
}
