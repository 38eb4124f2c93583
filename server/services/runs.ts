/**
 * Fit runs: create (resolve every setting and the provenance, store the row as queued, hand it to the
 * job runner), read, list, cancel, run again, save the estimate as a parameter set, publish it as a
 * new model version.
 */
import { createHash, randomInt } from 'node:crypto'
import { and, desc, eq, inArray, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { bindings, datasets, models, modelVersions, parameterSets, projects, runs } from '../db/schema'
import { badRequest, conflict, notFound } from '../errors'
import type { JobRunner } from '../jobs/types'
import { compileHere, type SheetCompiler } from './request-work'
import type { SheetMeta } from '../jobs/request-tasks'
import type { ConvergenceTest, FitResult, FitStatus } from '../../shared/api/fit'
import {
  RESULT_CAUTION, type CreateEvaluationBody, type CreateRunBody, type FreeSpec, type ParameterSetDto, type Provenance, type RunDto,
  type RunProgress, type RunSettings, type RunStatus, type RunSummaryDto,
} from '../../shared/api/runs'
import type { ColumnMapping } from '../../shared/api/datasets'
import { columnsOf } from './datasets'
import { autoMatch, checkMapping, checkMappingNames, getVersionRow, signalsOf } from './bindings'
import { getProjectRow } from './projects'
import { ENGINE_VERSION } from './fit-execution'
import { assertNotTemplate, getModelRow, publishVersion, type Actor } from './models'
import { workspacePartTexts } from './part-library'
import { toDeclared } from '../../shared/sheet/compiled'
import { rewriteOlderDerivatives } from '../../shared/sheet/leibniz'

type RunRow = typeof runs.$inferSelect

const iso = (d: Date | string | null) => (d === null ? null : new Date(d).toISOString())

/** Free parameters / initial states with bounds and starts in declared units, defaults from the sheet. */
function resolveFree(model: SheetMeta, given: FreeSpec[] | undefined, kind: 'free' | 'initialStates') {
  const path = kind
  const isParam = kind === 'free'
  const pool = isParam ? model.params : model.states
  const defaults = isParam ? model.params.filter((p) => !p.fixed) : model.states.filter((s) => s.estimate)
  const list: FreeSpec[] = given ?? defaults.map((q) => ({ name: q.name }))
  const seen = new Set<string>()
  const details: { path: string; message: string }[] = []
  const out: RunSettings['free'] = []
  list.forEach((f, i) => {
    const q = pool.find((x) => x.name === f.name)
    if (!q) {
      details.push({ path: `body.${path}.${i}.name`, message: `the sheet has no ${isParam ? 'parameter' : 'state'} named '${f.name}' (${isParam ? 'parameters' : 'states'}: ${pool.map((x) => x.name).join(', ') || 'none'})` })
      return
    }
    if (seen.has(f.name)) { details.push({ path: `body.${path}.${i}.name`, message: `'${f.name}' is listed twice` }); return }
    seen.add(f.name)
    const value = isParam ? (q as SheetMeta['params'][number]).value : (q as SheetMeta['states'][number]).initial
    const a = q.lower === null ? null : toDeclared(q, q.lower)
    const b = q.upper === null ? null : toDeclared(q, q.upper)
    const lower = f.lower ?? (a === null || b === null ? null : Math.min(a, b))
    const upper = f.upper ?? (a === null || b === null ? null : Math.max(a, b))
    const start = f.start ?? toDeclared(q, value)
    if (lower === null || upper === null) {
      details.push({ path: `body.${path}.${i}`, message: `'${f.name}' has no bounds in the sheet; give lower and upper` })
      return
    }
    if (!(Number.isFinite(lower) && Number.isFinite(upper) && lower < upper)) {
      details.push({ path: `body.${path}.${i}.lower`, message: `'${f.name}': the lower bound (${lower}) must be below the upper bound (${upper})` })
      return
    }
    if (!(start >= lower && start <= upper)) {
      details.push({ path: `body.${path}.${i}.start`, message: `'${f.name}': the start ${start} lies outside its bounds [${lower}, ${upper}]` })
      return
    }
    out.push({ name: f.name, lower, upper, start })
  })
  return { out, details }
}

function sha256(text: string) {
  return createHash('sha256').update(text).digest('hex')
}

/** Checks the body against the project, model version and datasets; returns the settings and provenance. */
async function resolveRun(db: Db, workspaceId: number, projectId: number, body: CreateRunBody, rerunOf: number | null, compile: SheetCompiler, evaluation = false) {
  const { v } = await getVersionRow(db, workspaceId, body.modelId, body.version)
  // compiled off the event loop (request pool), with a time limit; the parts' texts travel with it
  const model = await compile(v.text, 'The model version', await workspacePartTexts(db, workspaceId, v.text))
  const ids = [...body.estimation, ...body.validation]
  const rows = await db.select({ id: datasets.id, name: datasets.name, contentHash: datasets.contentHash, columns: datasets.columns })
    .from(datasets).where(and(eq(datasets.projectId, projectId), inArray(datasets.id, ids)))
  const byId = new Map(rows.map((r) => [r.id, r]))
  const missing = ids.filter((id) => !byId.has(id))
  if (missing.length) throw badRequest(`No dataset ${missing.join(', ')} in this project`, missing.map((id) => ({ path: evaluation ? 'body.datasets' : body.estimation.includes(id) ? 'body.estimation' : 'body.validation', message: `no dataset ${id} in this project` })))
  const overlap = body.validation.filter((id) => body.estimation.includes(id))
  if (overlap.length) throw badRequest(`Dataset ${overlap.join(', ')} is chosen for both estimation and validation; validation data must not be used by the fit`, [{ path: 'body.validation', message: 'overlaps the estimation datasets' }])

  // mapping: explicit, else the binding's, else matched automatically
  const signals = signalsOf(v.summary)
  let bindingId: number | null = null
  let base: ColumnMapping | undefined = body.mapping
  if (body.bindingId) {
    const [b] = await db.select().from(bindings).where(and(eq(bindings.id, body.bindingId), eq(bindings.projectId, projectId))).limit(1)
    if (!b) throw notFound('Binding')
    // the binding gives the mapping; the run may take any version of its model (the form proposes the one the binding follows)
    if (b.modelId !== body.modelId) throw badRequest(`Binding ${b.id} is for model ${b.modelId}, not model ${body.modelId}`, [{ path: 'body.bindingId', message: `binding ${b.id} binds another model` }])
    bindingId = b.id
    base = body.mapping ?? (b.mapping as ColumnMapping)
  }
  if (base) checkMappingNames(signals, base)
  const firstCols = columnsOf(byId.get(body.estimation[0])!).map((c) => c.name)
  const mapping = autoMatch(signals, firstCols, base)
  const problems: { path: string; message: string }[] = []
  for (const id of ids) {
    const ds = byId.get(id)!
    for (const c of checkMapping(signals, mapping, columnsOf(ds))) {
      if (c.problem) problems.push({ path: `mapping.${c.kind}s.${c.signal}`, message: `dataset '${ds.name}' (${id}): ${c.kind} '${c.signal}': ${c.problem}` })
    }
  }
  if (!Object.values(mapping.outputs).some((c) => c)) {
    problems.push({ path: 'mapping.outputs', message: `no output is bound to a column: the data need a column for one of the sheet's outputs (${signals.outputs.map((o) => o.name).join(', ')})` })
  }
  if (problems.length) throw badRequest(problems.map((p) => p.message).join('; '), problems)

  const free = resolveFree(model, body.free, 'free')
  const states = resolveFree(model, body.initialStates, 'initialStates')
  const details = [...free.details, ...states.details]
  if (details.length) throw badRequest(details.map((d) => `${d.path}: ${d.message}`).join('; '), details)
  if (!evaluation && !free.out.length && !states.out.length) throw badRequest('Nothing to estimate: choose at least one free parameter or initial state', [{ path: 'body.free', message: 'empty' }])

  const seed = body.seed ?? randomInt(1, 2 ** 31 - 1)
  const settings: RunSettings = {
    name: body.name?.trim() || '',
    bindingId,
    estimation: body.estimation,
    validation: body.validation,
    mapping,
    free: free.out,
    initialStates: states.out,
    method: body.method,
    starts: body.starts,
    ...(body.segments !== undefined && body.segments > 1 ? { segments: body.segments } : {}),
    weighting: body.weighting,
    tolerances: body.tolerances,
    seed,
    rerunOf,
    validationStart: body.validationStart ?? 'sheet',
  }
  const provenance: Provenance = {
    modelId: body.modelId,
    modelVersion: body.version,
    modelVersionId: v.id,
    sheetHash: sha256(v.text),
    datasets: ids.map((id) => ({ id, name: byId.get(id)!.name, contentHash: byId.get(id)!.contentHash, role: evaluation ? 'evaluation' as const : body.estimation.includes(id) ? 'estimation' as const : 'validation' as const })),
    engineVersion: ENGINE_VERSION,
    seed,
    createdAt: new Date().toISOString(),
  }
  return { settings, provenance, model }
}

export async function createRun(db: Db, jobs: JobRunner | undefined, workspaceId: number, projectId: number, userId: number, body: CreateRunBody, rerunOf: number | null = null, compile: SheetCompiler = compileHere): Promise<RunDto> {
  await getProjectRow(db, workspaceId, projectId)
  if (rerunOf === null && body.rerunOf !== undefined) {
    const [of] = await db.select({ id: runs.id }).from(runs).where(and(eq(runs.id, body.rerunOf), eq(runs.projectId, projectId))).limit(1)
    if (!of) throw badRequest(`No run ${body.rerunOf} in this project to repeat`, [{ path: 'body.rerunOf', message: `no run ${body.rerunOf} in this project` }])
    rerunOf = of.id
  }
  const { settings, provenance } = await resolveRun(db, workspaceId, projectId, body, rerunOf, compile)
  return insertRun(db, jobs, { workspaceId, projectId, userId, modelId: body.modelId, version: body.version }, settings, provenance)
}

async function insertRun(db: Db, jobs: JobRunner | undefined, at: { workspaceId: number; projectId: number; userId: number; modelId: number; version: number }, settings: RunSettings, provenance: Provenance): Promise<RunDto> {
  const [row] = await db.insert(runs).values({
    workspaceId: at.workspaceId, projectId: at.projectId, modelId: at.modelId, modelVersion: at.version, bindingId: settings.bindingId,
    status: 'queued', settings, provenance, createdBy: at.userId,
  }).returning()
  if (!settings.name) {
    await db.update(runs).set({ settings: { ...settings, name: `${settings.kind === 'evaluation' ? 'Evaluation' : 'Run'} ${row.id}` } }).where(eq(runs.id, row.id))
  }
  if (jobs) await jobs.enqueue(row.id)
  return getRun(db, at.workspaceId, row.id)
}

/**
 * An evaluation run: the model version simulated on the chosen records with nothing free, its values
 * replaced by a saved parameter set's or a finished fit's estimates (shared ones as they are; a
 * per-record estimate by the mean over its records). The values are stored on the run, so it can be
 * run again after the set or the source run is gone.
 */
export async function createEvaluation(db: Db, jobs: JobRunner | undefined, workspaceId: number, projectId: number, userId: number,
  body: CreateEvaluationBody, rerunOf: number | null = null, compile: SheetCompiler = compileHere, stored?: Pick<RunSettings, 'values' | 'valuesFrom'>): Promise<RunDto> {
  await getProjectRow(db, workspaceId, projectId)
  const runBody: CreateRunBody = {
    modelId: body.modelId, version: body.version, ...(body.name ? { name: body.name } : {}), ...(body.bindingId ? { bindingId: body.bindingId } : {}),
    estimation: body.datasets, validation: [], ...(body.mapping ? { mapping: body.mapping } : {}), free: [], initialStates: [],
    method: 'lm', starts: 1, weighting: 'sheet', tolerances: {}, seed: 1,
  }
  const { settings, provenance, model } = await resolveRun(db, workspaceId, projectId, runBody, rerunOf, compile, true)
  const picked = stored ?? await evaluationValues(db, workspaceId, body, model)
  return insertRun(db, jobs, { workspaceId, projectId, userId, modelId: body.modelId, version: body.version },
    { ...settings, kind: 'evaluation', values: picked.values, valuesFrom: picked.valuesFrom, validationStart: body.start }, provenance)
}

type ValueRow = { name: string; value: number; unit: string; experiment: number | null }

/** The parameter values of a parameter set or a finished fit of the same model, checked against the sheet. */
async function evaluationValues(db: Db, workspaceId: number, body: CreateEvaluationBody, model: SheetMeta): Promise<Pick<RunSettings, 'values' | 'valuesFrom'>> {
  let rows: ValueRow[]
  let valuesFrom: NonNullable<RunSettings['valuesFrom']>
  let field: string
  if (body.parameterSetId) {
    field = 'body.parameterSetId'
    const [ps] = await db.select({ ps: parameterSets }).from(parameterSets).innerJoin(projects, eq(projects.id, parameterSets.projectId))
      .where(and(eq(parameterSets.id, body.parameterSetId), eq(projects.workspaceId, workspaceId))).limit(1)
    if (!ps) throw notFound('Parameter set')
    if (ps.ps.modelId !== body.modelId) throw badRequest(`Parameter set '${ps.ps.name}' belongs to another model`, [{ path: field, message: 'belongs to another model' }])
    rows = Object.entries(ps.ps.values as ParameterSetDto['values']).flatMap(([key, v]) => {
      if (key.includes('(0)')) return []
      const m = /^(.+?)(?:\[(\d+)\])?$/.exec(key)!
      return [{ name: m[1], value: v.value, unit: v.unit, experiment: m[2] === undefined ? null : Number(m[2]) }]
    })
    valuesFrom = { kind: 'parameter-set', id: ps.ps.id, name: ps.ps.name }
  } else if (body.sourceRunId) {
    field = 'body.sourceRunId'
    const src = await getRunRow(db, workspaceId, body.sourceRunId)
    if (src.modelId !== body.modelId) throw badRequest(`Run ${src.id} fitted another model`, [{ path: field, message: 'fitted another model' }])
    if ((src.settings as RunSettings).kind === 'evaluation') throw badRequest(`Run ${src.id} is an evaluation; take the estimates of a fit`, [{ path: field, message: 'is an evaluation, not a fit' }])
    rows = finishedResult(src).parameters.map((p) => ({ name: p.name, value: p.value, unit: p.unit, experiment: p.experiment }))
    valuesFrom = { kind: 'run', id: src.id, name: (src.settings as RunSettings).name || `Run ${src.id}` }
  } else {
    return { values: {}, valuesFrom: { kind: 'version', id: null, name: `version ${body.version}` } }
  }
  const groups = new Map<string, { unit: string; values: number[] }>()
  for (const r of rows) {
    const g = groups.get(r.name) ?? { unit: r.unit, values: [] }
    g.values.push(r.value)
    groups.set(r.name, g)
  }
  const values: Record<string, number> = {}
  const problems: { path: string; message: string }[] = []
  for (const [name, g] of groups) {
    const q = model.params.find((x) => x.name === name)
    if (!q) { problems.push({ path: field, message: `'${name}' is not a parameter of version ${body.version}` }); continue }
    if (q.unit !== g.unit) { problems.push({ path: field, message: `'${name}' is in ${g.unit || '1'} there but in ${q.unit || '1'} in the sheet` }); continue }
    values[name] = g.values.reduce((a, b) => a + b, 0) / g.values.length
  }
  if (problems.length) throw badRequest(`The ${valuesFrom.kind === 'run' ? 'run' : 'parameter set'} does not fit this model version: ${problems.map((p) => p.message).join('; ')}`, problems)
  return { values, valuesFrom }
}

/** "Run again": the same model version, datasets, settings and seed. */
export async function rerun(db: Db, jobs: JobRunner | undefined, workspaceId: number, runId: number, userId: number, compile: SheetCompiler = compileHere) {
  const row = await getRunRow(db, workspaceId, runId)
  const s = row.settings as RunSettings
  // a binding deleted since keeps nothing from the run: the run's own mapping is used
  const [bound] = s.bindingId ? await db.select({ id: bindings.id }).from(bindings).where(eq(bindings.id, s.bindingId)).limit(1) : []
  await assertSameData(db, row)
  if (s.kind === 'evaluation') {
    return createEvaluation(db, jobs, workspaceId, row.projectId, userId, {
      modelId: row.modelId, version: row.modelVersion, name: `${s.name || `Evaluation ${row.id}`} (again)`,
      ...(s.bindingId ? { bindingId: s.bindingId } : {}), datasets: s.estimation, mapping: s.mapping, start: s.validationStart ?? 'sheet',
    }, row.id, compile, { values: s.values, valuesFrom: s.valuesFrom })
  }
  const body: CreateRunBody = {
    modelId: row.modelId, version: row.modelVersion, name: `${s.name || `Run ${row.id}`} (again)`,
    ...(bound ? { bindingId: bound.id } : {}),
    estimation: s.estimation, validation: s.validation, mapping: s.mapping,
    free: s.free, initialStates: s.initialStates, method: s.method, starts: s.starts, weighting: s.weighting,
    ...(s.segments !== undefined ? { segments: s.segments } : {}),
    tolerances: s.tolerances, seed: s.seed, validationStart: s.validationStart ?? 'sheet',
  }
  return createRun(db, jobs, workspaceId, row.projectId, userId, body, row.id, compile)
}

/** Estimates exist only on fits: an evaluation has nothing to save, publish, hand over or map. */
export function assertFit(row: RunRow) {
  if ((row.settings as RunSettings).kind === 'evaluation') throw conflict(`Run ${row.id} is an evaluation: it estimated nothing (its values came from ${(row.settings as RunSettings).valuesFrom?.name ?? 'the model version'})`)
}

/** The datasets of a run must still hold the same content to run it again. */
async function assertSameData(db: Db, row: RunRow) {
  const prov = row.provenance as Provenance
  const now = await db.select({ id: datasets.id, contentHash: datasets.contentHash }).from(datasets).where(inArray(datasets.id, prov.datasets.map((d) => d.id)))
  for (const d of prov.datasets) {
    const cur = now.find((x) => x.id === d.id)
    if (!cur || cur.contentHash !== d.contentHash) throw conflict(`Dataset '${d.name}' (${d.id}) is gone or changed since run ${row.id}; it cannot be reproduced`)
  }
}

export async function getRunRow(db: Db, workspaceId: number, runId: number): Promise<RunRow> {
  const [r] = await db.select().from(runs).where(and(eq(runs.id, runId), eq(runs.workspaceId, workspaceId))).limit(1)
  if (!r) throw notFound('Run')
  return r
}

/** Figures on the records a fit never saw (validation records; every record of an evaluation). */
export function unseenFigures(outputs: { validation: boolean; rmse: number | null; nrmse: number | null }[] | undefined) {
  const rows = (outputs ?? []).filter((o) => o.validation)
  const nrmse = rows.map((o) => o.nrmse).filter((v): v is number => v !== null && Number.isFinite(v))
  return {
    validationRmse: rows.length === 1 ? rows[0].rmse : null,
    validationNrmse: nrmse.length ? nrmse.reduce((a, b) => a + b, 0) / nrmse.length : null,
  }
}

function summaryOf(r: RunRow, modelTitle: string, projectName: string): RunSummaryDto {
  const s = r.settings as RunSettings
  const result = r.result as { sse?: number | null; outputs?: { validation: boolean; rmse: number | null; nrmse: number | null }[]; validationRmse?: number | null; validationNrmse?: number | null } | null
  const unseen = result && 'validationNrmse' in result ? { validationRmse: result.validationRmse ?? null, validationNrmse: result.validationNrmse ?? null } : unseenFigures(result?.outputs)
  return {
    id: r.id, projectId: r.projectId, projectName, modelId: r.modelId, modelTitle, modelVersion: r.modelVersion,
    name: s.name || `Run ${r.id}`, status: r.status as RunStatus, progress: (r.progress as RunProgress | null) ?? null,
    error: r.error, cancelRequested: r.cancelRequested, createdAt: iso(r.createdAt)!, startedAt: iso(r.startedAt), finishedAt: iso(r.finishedAt),
    createdBy: r.createdBy, sse: r.status === 'succeeded' || r.status === 'cancelled' ? result?.sse ?? null : null,
    outcome: (r.outcome as FitStatus | null) ?? null, convergedBy: (r.convergedBy as ConvergenceTest | null) ?? null,
    kind: s.kind ?? 'fit',
    ...(r.status === 'succeeded' ? unseen : { validationRmse: null, validationNrmse: null }),
  }
}

export async function getRun(db: Db, workspaceId: number, runId: number): Promise<RunDto> {
  const [r] = await db.select({ r: runs, title: models.title, project: projects.name }).from(runs)
    .innerJoin(models, eq(models.id, runs.modelId)).innerJoin(projects, eq(projects.id, runs.projectId))
    .where(and(eq(runs.id, runId), eq(runs.workspaceId, workspaceId))).limit(1)
  if (!r) throw notFound('Run')
  return {
    ...summaryOf(r.r, r.title, r.project),
    settings: r.r.settings as RunSettings,
    provenance: r.r.provenance as Provenance,
    result: (r.r.result as Record<string, unknown> | null) ?? null,
    caution: RESULT_CAUTION,
  }
}

/** The fields the live-progress stream sends (no result). */
export async function getRunState(db: Db, workspaceId: number, runId: number) {
  const [r] = await db.select({ status: runs.status, progress: runs.progress, error: runs.error, cancelRequested: runs.cancelRequested })
    .from(runs).where(and(eq(runs.id, runId), eq(runs.workspaceId, workspaceId))).limit(1)
  return r ?? null
}

export async function listRuns(db: Db, workspaceId: number, filter: { projectId?: number; modelId?: number } = {}): Promise<RunSummaryDto[]> {
  // a project or model of another workspace (or none) answers 404, not an empty list
  if (filter.projectId) await getProjectRow(db, workspaceId, filter.projectId)
  if (filter.modelId) {
    const [m] = await db.select({ id: models.id }).from(models).where(and(eq(models.id, filter.modelId), eq(models.workspaceId, workspaceId))).limit(1)
    if (!m) throw notFound('Model')
  }
  const conds = [eq(runs.workspaceId, workspaceId)]
  if (filter.projectId) conds.push(eq(runs.projectId, filter.projectId))
  if (filter.modelId) conds.push(eq(runs.modelId, filter.modelId))
  const rows = await db.select({
    r: {
      id: runs.id, projectId: runs.projectId, modelId: runs.modelId, modelVersion: runs.modelVersion, status: runs.status,
      settings: runs.settings, progress: runs.progress, error: runs.error, cancelRequested: runs.cancelRequested,
      createdAt: runs.createdAt, startedAt: runs.startedAt, finishedAt: runs.finishedAt, createdBy: runs.createdBy,
      outcome: runs.outcome, convergedBy: runs.convergedBy,
      sse: sql<number | null>`(${runs.result} ->> 'sse')::float8`,
      validationRmse: sql<number | null>`(select case when count(*) = 1 then max((o ->> 'rmse')::float8) end from jsonb_array_elements(case when jsonb_typeof(${runs.result} -> 'outputs') = 'array' then ${runs.result} -> 'outputs' else '[]'::jsonb end) o where (o ->> 'validation')::boolean)`,
      validationNrmse: sql<number | null>`(select avg((o ->> 'nrmse')::float8) from jsonb_array_elements(case when jsonb_typeof(${runs.result} -> 'outputs') = 'array' then ${runs.result} -> 'outputs' else '[]'::jsonb end) o where (o ->> 'validation')::boolean and o ->> 'nrmse' is not null)`,
    },
    title: models.title, project: projects.name,
  }).from(runs)
    .innerJoin(models, eq(models.id, runs.modelId)).innerJoin(projects, eq(projects.id, runs.projectId))
    .where(and(...conds)).orderBy(desc(runs.createdAt), desc(runs.id)).limit(500)
  return rows.map(({ r, title, project }) => summaryOf({ ...r, result: { sse: r.sse, validationRmse: r.validationRmse, validationNrmse: r.validationNrmse } } as unknown as RunRow, title, project))
}

export async function cancelRun(db: Db, jobs: JobRunner | undefined, workspaceId: number, runId: number) {
  const row = await getRunRow(db, workspaceId, runId)
  if (row.status === 'succeeded' || row.status === 'failed' || row.status === 'cancelled') {
    throw conflict(`Run ${runId} has already finished (${row.status}); there is nothing to cancel`)
  }
  await db.update(runs).set({ cancelRequested: true }).where(eq(runs.id, runId))
  // a run no worker holds yet ends here; a running one stops at its next cancel poll
  await db.update(runs).set({ status: 'cancelled', finishedAt: sql`now()`, error: 'Cancelled before it started.' })
    .where(and(eq(runs.id, runId), eq(runs.status, 'queued'), sql`${runs.workerId} is null`))
  if (jobs) await jobs.cancel(runId)
  return getRun(db, workspaceId, runId)
}

function finishedResult(row: RunRow): FitResult {
  if (row.status !== 'succeeded' || !row.result) throw conflict(`Run ${row.id} has no result (status ${row.status})`)
  assertFit(row)
  return row.result as unknown as FitResult
}

export async function saveParameterSet(db: Db, workspaceId: number, runId: number, userId: number, name: string): Promise<ParameterSetDto> {
  const row = await getRunRow(db, workspaceId, runId)
  const result = finishedResult(row)
  const values: ParameterSetDto['values'] = {}
  for (const p of result.parameters) values[p.experiment === null ? p.name : `${p.name}[${p.experiment}]`] = { value: p.value, unit: p.unit }
  for (const s of result.initialStates) values[`${s.name}(0)[${s.experiment ?? 0}]`] = { value: s.value, unit: s.unit }
  const [ps] = await db.insert(parameterSets).values({ projectId: row.projectId, runId: row.id, modelId: row.modelId, name, values, createdBy: userId }).returning()
  return { id: ps.id, projectId: ps.projectId, runId: ps.runId, modelId: ps.modelId, name: ps.name, values, createdAt: iso(ps.createdAt)! }
}

export async function listParameterSets(db: Db, workspaceId: number, projectId: number): Promise<ParameterSetDto[]> {
  await getProjectRow(db, workspaceId, projectId)
  const rows = await db.select().from(parameterSets).where(eq(parameterSets.projectId, projectId)).orderBy(desc(parameterSets.createdAt))
  return rows.map((ps) => ({ id: ps.id, projectId: ps.projectId, runId: ps.runId, modelId: ps.modelId, name: ps.name, values: ps.values as ParameterSetDto['values'], createdAt: iso(ps.createdAt)! }))
}

/** Parameter sets saved from runs of one model, across the workspace's projects (newest first). */
export async function listModelParameterSets(db: Db, workspaceId: number, modelId: number): Promise<ParameterSetDto[]> {
  await getModelRow(db, workspaceId, modelId)
  const rows = await db.select({ ps: parameterSets }).from(parameterSets).innerJoin(projects, eq(projects.id, parameterSets.projectId))
    .where(and(eq(parameterSets.modelId, modelId), eq(projects.workspaceId, workspaceId))).orderBy(desc(parameterSets.createdAt))
  return rows.map(({ ps }) => ({ id: ps.id, projectId: ps.projectId, runId: ps.runId, modelId: ps.modelId, name: ps.name, values: ps.values as ParameterSetDto['values'], createdAt: iso(ps.createdAt)! }))
}

/** The text of the model version a run fitted. */
export async function fittedSheet(db: Db, workspaceId: number, runId: number): Promise<{ modelId: number; version: number; title: string; text: string }> {
  const row = await getRunRow(db, workspaceId, runId)
  const [v] = await db.select({ text: modelVersions.text, title: models.title }).from(modelVersions).innerJoin(models, eq(models.id, modelVersions.modelId))
    .where(and(eq(modelVersions.modelId, row.modelId), eq(modelVersions.number, row.modelVersion))).limit(1)
  if (!v) throw notFound('Model version')
  return { modelId: row.modelId, version: row.modelVersion, title: v.title, text: v.text }
}

/**
 * The calibrated sheet of a finished run, to download: the fitted version's text with the shared
 * estimates written into its param lines, headed by comment lines naming the run and the caution.
 */
export async function calibratedSheet(db: Db, workspaceId: number, runId: number): Promise<{ fileName: string; text: string; changed: string[] }> {
  const row = await getRunRow(db, workspaceId, runId)
  const result = finishedResult(row)
  const sheet = await fittedSheet(db, workspaceId, runId)
  const { text, changed, rewritten } = calibratedBody(sheet.text, result)
  const local = result.parameters.filter((p) => p.experiment !== null).map((p) => p.name)
  const head = [
    `# Calibrated sheet: "${sheet.title}" version ${sheet.version} with the estimates of Pewter fit run #${row.id}`,
    `# written into the param lines: ${changed.length ? changed.join(', ') : 'none'} (8 significant digits; the full values stay on the run)`,
    ...(rewritten.length ? [`# derivative lines written dx/dt = … (line${rewritten.length > 1 ? 's' : ''} ${rewritten.join(', ')} of the version had the older form x' = …)`] : []),
    ...(local.length ? [`# per-record estimates are not written here: ${[...new Set(local)].join(', ')}`] : []),
    `# ${RESULT_CAUTION}`,
  ]
  const slug = sheet.title.toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '') || 'model'
  return { fileName: `${slug}-v${sheet.version}-run${row.id}.sheet`, text: `${head.join('\n')}\n${text}`, changed }
}

/**
 * The body of the calibrated sheet: the estimates written in (sheetWithEstimates) and the derivative
 * lines of the older form `x' = …` written `dx/dt = …` (`rewritten`: their 1-based lines).
 */
export function calibratedBody(text: string, result: FitResult): { text: string; changed: string[]; rewritten: number[] } {
  const est = sheetWithEstimates(text, result)
  const r = rewriteOlderDerivatives(est.text)
  return { text: r.text, changed: est.changed, rewritten: r.lines }
}

/**
 * The sheet text with each shared fitted parameter's value replaced by its estimate (declared unit,
 * 8 significant digits; the full value stays on the run). Local
 * parameters (one estimate per experiment) and initial states are left as they are.
 */
export function sheetWithEstimates(text: string, result: FitResult): { text: string; changed: string[] } {
  const changed: string[] = []
  let out = text
  for (const p of result.parameters) {
    if (p.experiment !== null) continue
    const re = new RegExp(`^(\\s*param\\s+${p.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}\\s*=\\s*)([^\\s\\[#]+)`, 'm')
    if (!re.test(out)) continue
    out = out.replace(re, (_m, head: string) => `${head}${formatValue(p.value)}`)
    changed.push(p.name)
  }
  return { text: out, changed }
}

function formatValue(v: number): string {
  const s = Number(v.toPrecision(8)).toString()
  return s.includes('e') ? s.replace('e+', 'e') : s
}

export async function publishFromRun(db: Db, actor: Actor, runId: number, note: string | undefined) {
  const row = await getRunRow(db, actor.workspaceId, runId)
  const result = finishedResult(row)
  // a shipped template stays read-only: its estimates go to a fork
  await assertNotTemplate(db, actor, row.modelId)
  const [latest] = await db.select({ number: modelVersions.number }).from(modelVersions).where(eq(modelVersions.modelId, row.modelId)).orderBy(desc(modelVersions.number)).limit(1)
  const [v] = await db.select({ text: modelVersions.text }).from(modelVersions).where(and(eq(modelVersions.modelId, row.modelId), eq(modelVersions.number, row.modelVersion))).limit(1)
  if (!v || !latest) throw notFound('Model version')
  if (latest.number !== row.modelVersion) {
    throw conflict(`Run ${row.id} fitted version ${row.modelVersion}, but version ${latest.number} is the latest; publishing would drop the changes made since. Fit version ${latest.number} and publish from that run.`)
  }
  const { text, changed } = sheetWithEstimates(v.text, result)
  if (!changed.length) throw badRequest('No shared parameter of the sheet could be updated from this run')
  const fullNote = `${note ? `${note}\n\n` : ''}Parameters ${changed.join(', ')} set to the estimates of fit run #${row.id} (from version ${row.modelVersion}; project ${row.projectId}; run: /runs/${row.id}).`
  const created = await publishVersion(db, actor, row.modelId, { text, note: fullNote.slice(0, 2000), baseVersion: latest.number })
  await db.update(modelVersions).set({ fromRunId: row.id }).where(and(eq(modelVersions.modelId, row.modelId), eq(modelVersions.number, created.number)))
  return { ...created, fromRunId: row.id, changed }
}
