/**
 * Assemble the fit result (shared/api/fit.ts) at the chosen estimate.
 *
 * "At a bound": an estimate whose optimiser coordinate (ln θ for log-transformed parameters, θ
 * otherwise) lies within 1e-6 of the coordinate range from a bound. Such a parameter is left out of the
 * linearised covariance (its interval is reported as null: the linearisation does not hold at an
 * active constraint) but it still counts in p for s² = SSE/(N − p).
 *
 * Intervals: value ± t_{0.975, N−p}·se with se from s²·(JᵀJ)⁻¹ of √W·J through the SVD
 * (stats/covariance.ts).
 */
import { toDeclared, type CompiledModel, type UnitMap } from '../../sheet/compiled'
import type {
  EstimateRow, FitResult, FitWeighting, OutputRow, ResidualDiagnostics, EquationErrorRow, LandscapeResult, StartRow,
} from '../../api/fit'
import { FitProblem, type PreparedExperiment, type ProblemSpec, type Simulate } from './problem'
import { makeProblem, resolveTolerances, type FitOptions, type StartOutcome } from './driver'
import { BoxTransform } from './transform'
import { sumSquares } from './lsq'
import { linearisedCovariance } from '../stats/covariance'
import { fitMetrics, aic, bic } from '../stats/metrics'
import { autocorrelation, crossCorrelation, ljungBox, maxLagFor, whiteBand } from '../stats/residuals'
import { sampleTrace } from './interp'
import { profileInterval } from './profile'
import { costLandscape } from '../landscape'
import type { EquationErrorEstimate } from './equation-error'

export const AT_BOUND_TOL = 1e-6

export const CAUTIONS = [
  'Estimates, intervals and fit figures describe these data and this model only; check the model against independent validation data before using it for control or for any safety-related decision.',
  'Linearised confidence intervals assume the model structure is right and the noise is white and Gaussian; strongly correlated or bound-held parameters make them unreliable.',
]

interface BuildArgs {
  model: CompiledModel
  spec: ProblemSpec
  opts: FitOptions
  simulate: Simulate
  best: StartOutcome
  outcomes: StartOutcome[]
  weighting: FitWeighting
  eqErr: EquationErrorEstimate | null
  extraWarnings: string[]
  startedAt: number
  deadline?: number
}

const fin = (v: number): number | null => (Number.isFinite(v) ? v : null)
const toDeclaredDelta = (u: UnitMap, v: number) => v / Math.abs(u.scale)

export function unitOf(model: CompiledModel, prob: FitProblem, q: number): UnitMap {
  const qq = prob.quantities[q]
  return qq.kind === 'param' ? model.params[qq.index] : model.states[qq.index]
}

export async function buildResult(a: BuildArgs): Promise<FitResult> {
  const { model, spec, opts, simulate, best } = a
  const tol = resolveTolerances(opts)
  const prob = makeProblem(model, spec, simulate, opts)
  if (best.weights) prob.setOutputWeights(best.weights)
  const n = prob.n
  const m = prob.m
  const theta = Float64Array.from(best.theta)
  const r = new Float64Array(m)
  const jac = new Float64Array(m * n)
  const warnings = [...prob.warnings, ...a.extraWarnings]
  const evalOk = best.status !== 'failed' && best.status !== 'aborted' && prob.evaluate(theta, r, jac)
  const tr = new BoxTransform(prob.lower, prob.upper, opts.logTransform ?? true)
  const sse = evalOk ? sumSquares(r) : NaN
  let status = best.status
  let reason = best.reason
  if (!evalOk && status !== 'aborted') {
    status = 'failed'
    reason = best.status === 'failed' ? `${best.reason}${prob.lastError ? `: ${prob.lastError}` : ''}` : `the model cannot be evaluated at the estimate${prob.lastError ? `: ${prob.lastError}` : ''}`
  }

  // --- bounds and covariance
  const atBound: ('lower' | 'upper' | null)[] = []
  const z = new Float64Array(n)
  tr.toZ(theta, z)
  for (let q = 0; q < n; q++) {
    const range = tr.zHi[q] - tr.zLo[q]
    atBound.push(z[q] - tr.zLo[q] <= AT_BOUND_TOL * range ? 'lower' : tr.zHi[q] - z[q] <= AT_BOUND_TOL * range ? 'upper' : null)
  }
  const freeCols = atBound.map((b, q) => (b === null ? q : -1)).filter((q) => q >= 0)
  const nf = freeCols.length
  const jf = new Float64Array(m * nf)
  freeCols.forEach((q, c) => jf.set(jac.subarray(q * m, (q + 1) * m), c * m))
  const cov = evalOk ? linearisedCovariance(jf, m, nf, sse, n) : null
  const se = new Float64Array(n).fill(NaN)
  const corr: (number | null)[][] = Array.from({ length: n }, () => new Array<number | null>(n).fill(null))
  if (cov) {
    freeCols.forEach((q, c) => {
      se[q] = cov.stdError[c]
      freeCols.forEach((q2, c2) => (corr[q][q2] = fin(cov.correlation[c * nf + c2])))
    })
  }
  // identifiability
  if (cov) {
    for (let i = 0; i < nf; i++) {
      for (let j = i + 1; j < nf; j++) {
        const c = cov.correlation[i * nf + j]
        if (Math.abs(c) > 0.99) {
          warnings.push(`identifiability: '${prob.names[freeCols[i]]}' and '${prob.names[freeCols[j]]}' are strongly correlated (r = ${c.toFixed(4)}); these data hardly tell them apart`)
        }
      }
    }
    if (cov.rank < nf) {
      const who = cov.weakDirection.map((c) => `'${prob.names[freeCols[c]]}'`).join(', ')
      const ratio = cov.scaledSingularValues[nf - 1] / cov.scaledSingularValues[0]
      warnings.push(`identifiability: the scaled Jacobian is near rank-deficient (smallest/largest singular value ${ratio.toExponential(2)}); ${who} cannot be determined separately from these data`)
    }
  }
  atBound.forEach((b, q) => {
    if (b) warnings.push(`'${prob.names[q]}' stopped at its ${b} bound: it has no linearised interval; widen the bound if the physics allows`)
  })
  const t975 = cov?.tQuantile ?? NaN

  // --- profile likelihood
  const profiles = new Map<number, [number, number]>()
  for (const name of opts.profile ?? []) {
    const q = prob.names.indexOf(name)
    if (q < 0) {
      warnings.push(`profile: '${name}' is not an estimated quantity (estimated: ${prob.names.join(', ')})`)
      continue
    }
    if (!evalOk || !cov || !(cov.dof > 0)) continue
    const pr = await profileInterval(prob, theta, q, sse, cov.s2, t975, se[q], opts, a.deadline)
    profiles.set(q, pr)
  }

  const row = (q: number): EstimateRow => {
    const u = unitOf(model, prob, q)
    const qq = prob.quantities[q]
    const v = toDeclared(u, theta[q])
    const s = toDeclaredDelta(u, se[q])
    const lo = toDeclared(u, prob.lower[q])
    const hi = toDeclared(u, prob.upper[q])
    const out: EstimateRow = {
      name: qq.name, experiment: qq.experiment, unit: u.unit, value: v, start: toDeclared(u, best.start[q]),
      stdError: fin(s), ci95: [fin(v - t975 * s), fin(v + t975 * s)],
      lower: Math.min(lo, hi), upper: Math.max(lo, hi), atBound: atBound[q], logTransformed: tr.isLog[q],
    }
    const pr = profiles.get(q)
    if (pr) out.profileCi95 = [fin(toDeclared(u, pr[0])), fin(toDeclared(u, pr[1]))]
    return out
  }
  const parameters: EstimateRow[] = []
  const initialStates: EstimateRow[] = []
  for (let q = 0; q < n; q++) (prob.quantities[q].kind === 'param' ? parameters : initialStates).push(row(q))

  // --- per output and experiment
  const outputs: OutputRow[] = []
  if (evalOk) {
    prob.experiments.forEach((ex, e) => {
      const yh = prob.lastY[e]
      if (yh) outputs.push(...outputRows(model, ex, yh, e, false, best.weights !== null))
    })
    const means = localMeans(prob, theta)
    if (prob.validation.length > 0 && prob.quantities.some((q) => q.experiment !== null)) {
      warnings.push('validation: local parameters take the mean of their per-experiment estimates, estimated initial states their sheet values')
    }
    prob.validation.forEach((ex, k) => {
      const p = new Float64Array(model.np)
      const x0 = new Float64Array(model.nx)
      prob.fillExperiment(theta, -1, p, x0)
      for (const [idx, v] of means) p[idx] = v
      const res = prob.simulateExperiment(ex, p, undefined, false)
      if (!res) {
        warnings.push(`validation ${ex.data.name}: the simulation failed: ${prob.lastError}`)
        return
      }
      outputs.push(...outputRows(model, ex, res.y, prob.experiments.length + k, true, best.weights !== null))
    })
  }

  // --- landscape
  let landscape: LandscapeResult | null = null
  if (opts.landscape && evalOk) {
    landscape = costLandscape(prob, theta, Float64Array.from(best.start), opts.landscape, tr, se, (q, v) => toDeclared(unitOf(model, prob, q), v))
  }

  // --- equation error comparison
  let equationError: EquationErrorRow | null = null
  if (a.eqErr) {
    equationError = {
      parameters: a.eqErr.quantityIndex.map((q, k) => {
        const u = unitOf(model, prob, q)
        return { name: prob.names[q], value: toDeclared(u, a.eqErr!.theta[k]), stdError: fin(toDeclaredDelta(u, a.eqErr!.stdError[k])) }
      }),
      sse: fin(a.eqErr.outputErrorSse(prob)),
      note: 'ordinary least-squares one-step-ahead (equation-error) estimate; biased when the noise is on the measured output',
    }
  }

  const starts: StartRow[] = a.outcomes.map((o) => ({
    index: o.index, start: o.start, value: o.theta.map(fin), sse: fin(o.cost), status: o.status, reason: o.reason,
    iterations: o.iterations, simulations: o.simulations,
  }))
  const totalSims = a.outcomes.reduce((s, o) => s + o.simulations, 0) + prob.simulations
  if (a.outcomes.length > 1) {
    const ok = a.outcomes.filter((o) => o.status !== 'failed' && Number.isFinite(o.cost))
    const distinct = ok.filter((o) => Math.abs(o.objective - best.objective) > 1e-6 * Math.abs(best.objective) + 1e-12)
    if (distinct.length > 0) warnings.push(`${distinct.length} of ${a.outcomes.length} starts ended at a higher cost (local minima)`)
    const failed = a.outcomes.length - ok.length
    if (failed > 0) warnings.push(`${failed} of ${a.outcomes.length} starts failed`)
  }
  return {
    status, reason, sse: fin(sse), iterations: best.iterations, simulations: totalSims,
    elapsedMs: performance.now() - a.startedAt,
    parameters, initialStates, outputs,
    correlation: { names: prob.names, matrix: corr },
    warnings: dedupe(warnings),
    method: opts.method ?? 'lm', weighting: a.weighting, nObservations: m, nEstimated: n,
    dof: m - n, s2: cov ? fin(cov.s2) : null, tQuantile: fin(t975),
    aic: evalOk && sse > 0 ? fin(aic(sse, m, n)) : null, bic: evalOk && sse > 0 ? fin(bic(sse, m, n)) : null,
    costHistory: best.costHistory, starts, bestStart: best.index,
    tolerances: tol, landscape, equationError, cautions: CAUTIONS,
  }
}

function dedupe(a: string[]): string[] {
  return [...new Set(a)]
}

/** Local parameters' mean over the fit experiments, by model parameter index. */
function localMeans(prob: FitProblem, theta: Float64Array): Map<number, number> {
  const groups = new Map<number, number[]>()
  prob.quantities.forEach((q, i) => {
    if (q.experiment === null || q.kind !== 'param') return
    const g = groups.get(q.index) ?? []
    g.push(theta[i])
    groups.set(q.index, g)
  })
  return new Map([...groups].map(([k, v]) => [k, v.reduce((s, x) => s + x, 0) / v.length]))
}

function outputRows(model: CompiledModel, ex: PreparedExperiment, yh: Float64Array, e: number, validation: boolean, ml: boolean): OutputRow[] {
  const ny = model.ny
  const rows: OutputRow[] = []
  for (const j of ex.measuredOutputs) {
    const o = model.outputs[j]
    const idx: number[] = []
    for (let i = 0; i < ex.obs.count; i++) if (ex.obs.oIdx[i] === j) idx.push(i)
    const y = new Float64Array(idx.length)
    const yhat = new Float64Array(idx.length)
    const times = new Float64Array(idx.length)
    idx.forEach((i, k) => {
      y[k] = toDeclared(o, ex.obs.y[i])
      yhat[k] = toDeclared(o, yh[ex.obs.tIdx[i] * ny + j])
      times[k] = ex.tOut[ex.obs.tIdx[i]]
    })
    const met = fitMetrics(y, yhat)
    const w = ex.weights[j]
    rows.push({
      name: o.name, experiment: e, experimentName: ex.data.name, validation, n: met.n,
      nrmse: fin(met.nrmse), rmse: fin(met.rmse), r2: fin(met.r2),
      weight: fin(w * o.scale * o.scale),
      sigmaEstimate: ml ? fin(Math.sqrt(1 / w) / Math.abs(o.scale)) : null,
      residuals: residualDiagnostics(model, ex, y, yhat, times),
    })
  }
  return rows
}

function residualDiagnostics(model: CompiledModel, ex: PreparedExperiment, y: Float64Array, yhat: Float64Array, times: Float64Array): ResidualDiagnostics | null {
  const n = y.length
  if (n < 3) return null
  const e = new Float64Array(n)
  for (let i = 0; i < n; i++) e[i] = y[i] - yhat[i]
  const L = maxLagFor(n)
  const r = autocorrelation(e, L)
  const lb = ljungBox(r, n)
  const cross: ResidualDiagnostics['crossCorrelation'] = []
  const uAt = new Float64Array(n)
  model.inputs.forEach((inp, i) => {
    const tr = ex.inputs[i]
    if (!tr) return
    sampleTrace(tr, times, inp.interp, uAt)
    const c = crossCorrelation(uAt, e, L)
    cross.push({ input: inp.name, lags: Array.from({ length: 2 * L + 1 }, (_, k) => k - L), values: Array.from(c, (v) => (Number.isFinite(v) ? v : 0)) })
  })
  return {
    n, maxLag: L, band95: whiteBand(n),
    autocorrelation: Array.from(r, (v) => (Number.isFinite(v) ? v : 0)),
    ljungBox: { q: Number.isFinite(lb.q) ? lb.q : 0, lags: lb.lags, pValue: Number.isFinite(lb.pValue) ? lb.pValue : 1 },
    crossCorrelation: cross,
  }
}
