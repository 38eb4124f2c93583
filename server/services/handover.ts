/**
 * Hand-over of a model version: operating point, linearisation and responses (shared/engine/linear),
 * and exports (shared/export), with the parameter values of the sheet, a fit run or a saved parameter
 * set of the same workspace.
 */
import { and, eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { parameterSets, projects } from '../db/schema'
import { badRequest, conflict, notFound } from '../errors'
import { parseModel, compileModel, SheetError, type CompiledModel, type ParsedModel } from '../../shared/sheet'
import type { FitResult } from '../../shared/api/fit'
import type { ExportBody, HandoverBody, LinearAnalysis } from '../../shared/api/handover'
import { AnalysisInputError, analyzeModel, covarianceFromFit, resolveValues, type ValueSources } from '../../shared/engine/linear'
import { buildExport, exportMeta, type ExportFile } from '../../shared/export'
import { getVersion, type Actor } from './models'
import { assertFit, getRunRow } from './runs'

interface Prepared {
  parsed: ParsedModel
  model: CompiledModel
  sources: ValueSources
  fit: FitResult | null
  label: string
  warnings: string[]
}

async function prepare(db: Db, actor: Actor, modelId: number, number: number, body: HandoverBody): Promise<Prepared> {
  const v = await getVersion(db, actor, modelId, number)
  const r = parseModel(v.text)
  if (!r.model) throw badRequest(`Version ${number} of this model has errors and cannot be handed over`, { diagnostics: r.diagnostics })
  let model: CompiledModel
  try {
    model = compileModel(r.model)
  } catch (e) {
    if (e instanceof SheetError) throw badRequest(e.message)
    throw e
  }
  const warnings: string[] = []
  const sources: ValueSources = { set: body.set, inputs: body.inputs }
  let fit: FitResult | null = null
  const src = body.source
  if (src.kind === 'run') {
    const run = await getRunRow(db, actor.workspaceId, src.runId)
    if (run.modelId !== modelId) throw badRequest(`Run ${run.id} fitted another model (model ${run.modelId}); its estimates do not apply to this one`)
    if (run.status !== 'succeeded' || !run.result) throw conflict(`Run ${run.id} has no result (status ${run.status})`)
    assertFit(run)
    fit = run.result as unknown as FitResult
    if (run.modelVersion !== number) warnings.push(`run ${run.id} fitted version ${run.modelVersion}; its estimates are applied to version ${number} by parameter name`)
    sources.fit = { result: fit, label: `fit run #${run.id} (version ${run.modelVersion})` }
  } else if (src.kind === 'parameter-set') {
    const [ps] = await db.select({ id: parameterSets.id, name: parameterSets.name, modelId: parameterSets.modelId, values: parameterSets.values })
      .from(parameterSets).innerJoin(projects, eq(projects.id, parameterSets.projectId))
      .where(and(eq(parameterSets.id, src.parameterSetId), eq(projects.workspaceId, actor.workspaceId))).limit(1)
    if (!ps) throw notFound('Parameter set')
    if (ps.modelId !== modelId) throw badRequest(`Parameter set ${ps.id} belongs to another model (model ${ps.modelId})`)
    sources.parameterSet = { values: ps.values as Record<string, { value: number }>, label: `parameter set '${ps.name}' (#${ps.id})` }
  }
  return { parsed: r.model, model, sources, fit, label: `${v.summary.title || model.title}, version ${number} (model #${modelId})`, warnings }
}

function analyse(p: Prepared, body: HandoverBody, frequencies = body.frequencies): { analysis: LinearAnalysis; pv: Float64Array; provenance: string } {
  try {
    const v = resolveValues(p.model, p.sources)
    const covariance = p.fit ? covarianceFromFit(p.model, p.fit) : null
    const analysis = analyzeModel(p.model, { p: v.p, u: v.u, at: body.at, provenance: v.provenance, covariance, frequencies, steps: body.steps })
    analysis.warnings.unshift(...p.warnings)
    return { analysis, pv: v.p, provenance: v.provenance }
  } catch (e) {
    if (e instanceof AnalysisInputError) throw badRequest(e.message)
    throw e
  }
}

export async function linearizeVersion(db: Db, actor: Actor, modelId: number, number: number, body: HandoverBody): Promise<LinearAnalysis> {
  return analyse(await prepare(db, actor, modelId, number, body), body).analysis
}

export async function exportVersion(db: Db, actor: Actor, modelId: number, number: number, body: ExportBody): Promise<ExportFile> {
  const p = await prepare(db, actor, modelId, number, body)
  const needsAnalysis = body.format === 'ss-json' || body.format === 'ss-csv'
  let pv: Float64Array
  let provenance: string
  let analysis: LinearAnalysis | undefined
  if (needsAnalysis) {
    const r = analyse(p, { ...body, steps: false }, 0)
    pv = r.pv
    provenance = r.provenance
    analysis = r.analysis
  } else {
    try {
      const v = resolveValues(p.model, p.sources)
      pv = v.p
      provenance = v.provenance
    } catch (e) {
      if (e instanceof AnalysisInputError) throw badRequest(e.message)
      throw e
    }
  }
  try {
    return buildExport({ format: body.format, parsed: p.parsed, model: p.model, p: pv, meta: exportMeta(p.model, p.label, provenance), analysis })
  } catch (e) {
    if (e instanceof AnalysisInputError) throw badRequest(e.message)
    throw e
  }
}
