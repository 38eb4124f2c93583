/**
 * Evaluate a calibrated model on records with nothing free: simulate each record with the given
 * parameter values (and optionally initial states estimated on the record with every parameter
 * frozen, validation-start.ts), then the per-output figures and residual checks of a fit
 * (result.ts outputRows). The same problem machinery as a fit, with no estimated quantity.
 */
import { toDeclared, type CompiledModel } from '../../sheet/compiled'
import type { EvaluationResult, EvaluationSource } from '../../api/evaluation'
import { EVALUATION_CAUTIONS } from '../../api/evaluation'
import type { OutputRow } from '../../api/fit'
import { makeProblem, resolveTolerances, type FitOptions } from './driver'
import type { ExperimentData, FitProblem, Simulate } from './problem'
import { estimatedStartOf } from './validation-start'
import { outputRows } from './result'

export interface EvaluationSpec {
  records: ExperimentData[]
  /** parameter values in internal units replacing the sheet's, with their origin */
  set: Record<string, { value: number; source: EvaluationSource }>
  start: 'sheet' | 'estimate'
  t0?: number
}

export interface Evaluation {
  result: EvaluationResult
  prob: FitProblem
  /** per record: the simulated outputs (tOut × ny, internal units) or null when the simulation failed */
  simulated: (Float64Array | null)[]
}

export async function evaluateModel(model: CompiledModel, spec: EvaluationSpec, opts: FitOptions, simulate: Simulate): Promise<Evaluation> {
  const started = performance.now()
  const tol = resolveTolerances(opts)
  const set = Object.fromEntries(Object.entries(spec.set).map(([k, v]) => [k, v.value]))
  const prob = makeProblem(model, {
    experiments: spec.records, set, nothingFree: true, weighting: 'sheet', t0: spec.t0,
    fix: [...model.params.map((p) => p.name), ...model.states.map((s) => s.name)],
  }, simulate, opts)
  const warnings = [...prob.warnings]
  const outputs: OutputRow[] = []
  const initialStates: EvaluationResult['initialStates'] = []
  const simulated: (Float64Array | null)[] = []
  const p = new Float64Array(model.np)
  const x0 = new Float64Array(model.nx)
  let estimated = false
  for (let e = 0; e < prob.experiments.length; e++) {
    const ex = prob.experiments[e]
    prob.fillExperiment([], e, p, x0)
    let start: Float64Array | undefined
    if (spec.start === 'estimate') {
      const est = await estimatedStartOf(prob, ex, p, x0, { ftol: tol.ftol, xtol: tol.xtol, gtol: tol.gtol, signal: opts.signal }, ex.data.name, warnings, initialStates)
      if (est) {
        estimated = true
        start = est
      }
    }
    const res = prob.simulateExperiment(ex, p, start, false)
    if (!res) {
      warnings.push(`${ex.data.name}: the simulation failed: ${prob.lastError}`)
      simulated.push(null)
      continue
    }
    simulated.push(res.y)
    outputs.push(...outputRows(model, ex, res.y, e, true, false))
  }
  const parameters = model.params.map((q) => ({
    name: q.name, unit: q.unit,
    value: toDeclared(q, spec.set[q.name]?.value ?? q.value),
    source: spec.set[q.name]?.source ?? ('sheet' as const),
  }))
  return {
    prob, simulated,
    result: {
      kind: 'evaluation', parameters, start: estimated ? 'estimated' : 'sheet', initialStates, outputs,
      warnings: [...new Set(warnings)], cautions: EVALUATION_CAUTIONS,
      simulations: prob.simulations, elapsedMs: performance.now() - started,
    },
  }
}
