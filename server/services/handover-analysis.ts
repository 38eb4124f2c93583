/**
 * The hand-over work on a loaded model version, free of the database: parse and compile, linearise,
 * export. Runs in a request thread (server/jobs/request-tasks.ts) or in the request when no pool runs;
 * throws HttpError for bad input. The loading is in handover.ts.
 */
import { badRequest } from '../errors'
import { parseModel, compileModel, SheetError, type CompiledModel, type ParsedModel } from '../../shared/sheet'
import type { FitResult } from '../../shared/api/fit'
import type { ExportBody, HandoverBody, LinearAnalysis } from '../../shared/api/handover'
import { AnalysisInputError, analyzeModel, covarianceFromFit, resolveValues, type ValueSources } from '../../shared/engine/linear'
import { buildExport, exportMeta, type ExportFile } from '../../shared/export'

/** What the analysis of a version needs, as plain data (it crosses to a worker thread). */
export interface HandoverInput {
  text: string
  number: number
  label: string
  sources: ValueSources
  fit: FitResult | null
  warnings: string[]
}

interface Prepared {
  parsed: ParsedModel
  model: CompiledModel
  sources: ValueSources
  fit: FitResult | null
  label: string
  warnings: string[]
}

/** Parses and compiles the version (CPU work: in a request thread). */
function prepare(input: HandoverInput): Prepared {
  const r = parseModel(input.text)
  if (!r.model) throw badRequest(`Version ${input.number} of this model has errors and cannot be handed over`, { diagnostics: r.diagnostics })
  let model: CompiledModel
  try {
    model = compileModel(r.model)
  } catch (e) {
    if (e instanceof SheetError) throw badRequest(e.message)
    throw e
  }
  return { parsed: r.model, model, sources: input.sources, fit: input.fit, label: input.label, warnings: [...input.warnings] }
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

/** The analysis of a loaded version (runs in a request thread; throws HttpError for bad input). */
export function linearizeLoaded(input: HandoverInput, body: HandoverBody): LinearAnalysis {
  return analyse(prepare(input), body).analysis
}

/** The export of a loaded version (runs in a request thread). */
export function exportLoaded(input: HandoverInput, body: ExportBody): ExportFile {
  const p = prepare(input)
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
