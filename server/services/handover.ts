/**
 * Hand-over of a model version: operating point, linearisation and responses (shared/engine/linear),
 * and exports (shared/export), with the parameter values of the sheet, a fit run or a saved parameter
 * set of the same workspace. The database reads happen here; the analysis and the export (compiling,
 * Newton, continuation, frequency sweeps, uncertainty propagation) run on the request pool's threads
 * with its time limit (request-tasks.ts `handover`), never on the event loop.
 */
import { and, eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import type { AppContext } from '../context'
import { parameterSets, projects } from '../db/schema'
import { badRequest, conflict, notFound } from '../errors'
import type { FitResult } from '../../shared/api/fit'
import type { ExportBody, HandoverBody, LinearAnalysis } from '../../shared/api/handover'
import type { ValueSources } from '../../shared/engine/linear'
import type { ExportFile } from '../../shared/export'
import { exportLoaded, linearizeLoaded, type HandoverInput } from './handover-analysis'
import { getVersion, type Actor } from './models'
import { assertFit, getRunRow } from './runs'
import { requestPoolOf } from './request-work'
import { withoutLandscapeCache } from './landscape'

/** Reads the version and the source of the parameter values (database only). */
async function load(db: Db, actor: Actor, modelId: number, number: number, body: HandoverBody): Promise<HandoverInput> {
  const v = await getVersion(db, actor, modelId, number)
  const warnings: string[] = []
  const sources: ValueSources = { set: body.set, inputs: body.inputs }
  let fit: FitResult | null = null
  const src = body.source
  if (src.kind === 'run') {
    const run = await getRunRow(db, actor.workspaceId, src.runId)
    if (run.modelId !== modelId) throw badRequest(`Run ${run.id} fitted another model (model ${run.modelId}); its estimates do not apply to this one`)
    if (run.status !== 'succeeded' || !run.result) throw conflict(`Run ${run.id} has no result (status ${run.status})`)
    assertFit(run)
    // the traces and the cached landscapes are not needed: only the estimates and their covariance cross to the thread
    const { traces: _traces, ...result } = withoutLandscapeCache({ result: run.result as Record<string, unknown> }).result!
    fit = result as unknown as FitResult
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
  return { text: v.text, number, label: `${v.summary.title || `model #${modelId}`}, version ${number} (model #${modelId})`, sources, fit, warnings }
}

export async function linearizeVersion(context: AppContext, actor: Actor, modelId: number, number: number, body: HandoverBody): Promise<LinearAnalysis> {
  const input = await load(context.db, actor, modelId, number, body)
  const pool = requestPoolOf(context)
  if (!pool) return linearizeLoaded(input, body)
  return pool.run<LinearAnalysis>('handover', { kind: 'linearize', input, body }, `Linearising ${input.label}`)
}

export async function exportVersion(context: AppContext, actor: Actor, modelId: number, number: number, body: ExportBody): Promise<ExportFile> {
  const input = await load(context.db, actor, modelId, number, body)
  const pool = requestPoolOf(context)
  if (!pool) return exportLoaded(input, body)
  return pool.run<ExportFile>('handover', { kind: 'export', input, body }, `Exporting ${input.label}`)
}
