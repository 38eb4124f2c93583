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
 *
 * Rank deficiency: a singular value of the unit-column-scaled Jacobian below `identifiabilityCutoff`
 * times the largest counts as zero (cutoff max(1e-6, 10·rtol): below about the integration tolerance a
 * sensitivity column is only known to that accuracy, so smaller singular values are noise). Quantities
 * with a component in that null space get no standard error and no linearised interval ("not
 * determined by these data"); the determined combination is named (stats/identifiability.ts).
 * Correlations |r| > 0.99 among determined quantities are information lines (`notes`), not warnings:
 * a strongly correlated pair can still have honest intervals.
 */
import { toDeclared, type CompiledModel, type UnitMap } from '../../sheet/compiled'
import type {
  EstimateRow, FitResult, Identifiability, FitWeighting, OutputRow, ResidualDiagnostics, EquationErrorRow, LandscapeResult, StartRow,
} from '../../api/fit'
import { FitProblem, type PreparedExperiment, type ProblemSpec, type Simulate } from './problem'
import { makeProblem, resolveTolerances, type FitOptions, type StartOutcome } from './options'
import { BoxTransform } from './transform'
import { sumSquares } from './lsq'
import { linearisedCovariance } from '../stats/covariance'
import { analyseIdentifiability } from '../stats/identifiability'
import { estimatedStartOf } from './validation-start'
import { intervalBoundWarnings } from './interval-checks'
import { fitMetrics, aic, bic } from '../stats/metrics'
import { autocorrelation, crossCorrelation, independenceTest, ljungBox, maxLagFor, medianStep, whiteBand } from '../stats/residuals'
import { cumulativePeriodogram } from '../stats/whiteness'
import { jarqueBera } from '../stats/normality'
import { sampleTrace } from './interp'
import { profileInterval } from './profile'
import { costLandscape } from '../landscape'
import type { EquationErrorEstimate } from './equation-error'

export const AT_BOUND_TOL = 1e-6

/** relative singular value below which the scaled Jacobian counts as rank-deficient */
export function identifiabilityCutoff(rtol: number): number {
  return Math.max(1e-6, 10 * rtol)
}

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

/** The estimated quantities at `theta` in their declared units (the live estimates of a running fit). */
export function declaredEstimates(model: CompiledModel, prob: FitProblem, theta: ArrayLike<number>): { name: string; unit: string; value: number }[] {
  return prob.names.map((name, q) => {
    const u = unitOf(model, prob, q)
    return { name, unit: u.unit, value: toDeclared(u, theta[q]) }
  })
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
  let convergedBy = best.convergedBy
  let reason = best.reason
  let reasonStart: number | null = best.index + 1
  if (!evalOk && status !== 'aborted') {
    status = 'failed'
    convergedBy = null
    if (best.status === 'failed') {
      const failed = a.outcomes.filter((o) => o.status === 'failed').length
      reason = a.outcomes.length > 1 && failed === a.outcomes.length ? `all ${failed} starts failed; start ${best.index + 1}: ${best.reason}` : best.reason
    } else {
      reason = `the model cannot be evaluated at the estimate: ${prob.lastError ?? 'a residual or its sensitivity is not finite'}`
    }
  }
  if (status === 'converged') reasonStart = a.outcomes.length > 1 ? best.index + 1 : null

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
  const cutoff = identifiabilityCutoff(tol.rtol)
  const cov = evalOk ? linearisedCovariance(jf, m, nf, sse, n, cutoff) : null
  const se = new Float64Array(n).fill(NaN)
  const determined = new Array<boolean>(n).fill(true)
  const corr: (number | null)[][] = Array.from({ length: n }, () => new Array<number | null>(n).fill(null))
  const notes: string[] = []
  let identifiability: Identifiability | null = null
  if (cov && nf > 0) {
    const rep = analyseIdentifiability({
      v: cov.scaledV, s: cov.scaledSingularValues, norms: cov.columnNorms,
      theta: freeCols.map((q) => theta[q]), names: freeCols.map((q) => prob.names[q]), cutoff,
    })
    for (const c of rep.undetermined) determined[freeCols[c]] = false
    identifiability = {
      cutoff, relativeSingularValues: rep.relativeSingularValues, rank: rep.rank,
      undetermined: rep.undetermined.map((c) => prob.names[freeCols[c]]),
      combinations: rep.combinations,
      advice: rep.undetermined.length
        ? `fix one of ${rep.undetermined.map((c) => `'${prob.names[freeCols[c]]}'`).join(', ')} at a value known from elsewhere, or rewrite the sheet in terms of the combination that is determined; a profile-likelihood interval (on request) shows how far each one can move`
        : null,
    }
    if (rep.undetermined.length) {
      const ratio = rep.relativeSingularValues[rep.relativeSingularValues.length - 1]
      warnings.push(`identifiability: the scaled Jacobian is rank-deficient (smallest/largest singular value ${ratio.toExponential(2)}, below the cutoff ${cutoff.toExponential(0)}); ${rep.combinations.join('; ')}. ${rep.undetermined.map((c) => `'${prob.names[freeCols[c]]}'`).join(', ')}: not determined by these data, so no standard error and no linearised interval`)
    }
    freeCols.forEach((q, c) => {
      if (!determined[q]) return
      se[q] = cov.stdError[c]
      freeCols.forEach((q2, c2) => (corr[q][q2] = determined[q2] ? fin(cov.correlation[c * nf + c2]) : null))
    })
    for (let i = 0; i < nf; i++) {
      for (let j = i + 1; j < nf; j++) {
        if (!determined[freeCols[i]] || !determined[freeCols[j]]) continue
        const c = cov.correlation[i * nf + j]
        if (Math.abs(c) > 0.99) {
          notes.push(`'${prob.names[freeCols[i]]}' and '${prob.names[freeCols[j]]}' are strongly correlated (r = ${c.toFixed(4)}); their intervals already account for it`)
        }
      }
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
    const open = [pr[0] <= prob.lower[q] ? 'lower' : null, pr[1] >= prob.upper[q] ? 'upper' : null].filter((x) => x !== null)
    if (open.length) {
      warnings.push(`identifiability: the profile of '${name}' stays below the 95 % threshold up to its ${open.join(' and ')} bound${open.length > 1 ? 's' : ''}; these data do not bound it there`)
    }
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
      determined: determined[q],
    }
    const pr = profiles.get(q)
    if (pr) out.profileCi95 = [fin(toDeclared(u, pr[0])), fin(toDeclared(u, pr[1]))]
    return out
  }
  const parameters: EstimateRow[] = []
  const initialStates: EstimateRow[] = []
  for (let q = 0; q < n; q++) (prob.quantities[q].kind === 'param' ? parameters : initialStates).push(row(q))
  warnings.push(...intervalBoundWarnings([...parameters, ...initialStates].filter((r) => !r.profileCi95)))

  // --- per output and experiment
  const outputs: OutputRow[] = []
  const validationInitialStates: FitResult['validationInitialStates'] = []
  if (evalOk) {
    prob.experiments.forEach((ex, e) => {
      const yh = prob.lastY[e]
      if (yh) outputs.push(...outputRows(model, ex, yh, e, false, best.weights !== null))
    })
    const means = localMeans(prob, theta)
    const estimateStarts = spec.validationStart === 'estimate'
    if (prob.validation.length > 0 && prob.quantities.some((q) => q.experiment !== null && q.kind === 'param')) {
      warnings.push('validation: per-record parameters take the mean of their estimates on the fit records')
    }
    if (prob.validation.length > 0 && !estimateStarts && prob.quantities.some((q) => q.kind === 'state')) {
      warnings.push("validation: the estimated initial states take their sheet values on validation records; ask for initial states estimated on each record (parameters frozen) when a record starts elsewhere")
    }
    for (let k = 0; k < prob.validation.length; k++) {
      const ex = prob.validation[k]
      const p = new Float64Array(model.np)
      const x0 = new Float64Array(model.nx)
      prob.fillExperiment(theta, -1, p, x0)
      for (const [idx, v] of means) p[idx] = v
      const start = estimateStarts
        ? await estimatedStartOf(prob, ex, p, x0, { ftol: tol.ftol, xtol: tol.xtol, gtol: tol.gtol, signal: opts.signal, deadline: a.deadline }, `validation ${ex.data.name}`, warnings, validationInitialStates) ?? x0
        : x0
      const res = prob.simulateExperiment(ex, p, start, false)
      if (!res) {
        warnings.push(`validation ${ex.data.name}: the simulation failed: ${prob.lastError}`)
        continue
      }
      outputs.push(...outputRows(model, ex, res.y, prob.experiments.length + k, true, best.weights !== null))
    }
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
    index: o.index, start: o.start, value: o.theta.map(fin), sse: fin(o.cost), status: o.status, convergedBy: o.convergedBy, reason: o.reason,
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
    status, convergedBy, reason, reasonStart, sse: fin(sse), iterations: best.iterations, simulations: totalSims,
    elapsedMs: performance.now() - a.startedAt,
    parameters, initialStates, outputs,
    correlation: { names: prob.names, matrix: corr },
    warnings: dedupe(warnings),
    notes: dedupe(notes),
    identifiability,
    validationStart: prob.validation.length === 0 ? null : spec.validationStart === 'estimate' && validationInitialStates.length > 0 ? 'estimated' : 'sheet',
    validationInitialStates,
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

export function outputRows(model: CompiledModel, ex: PreparedExperiment, yh: Float64Array, e: number, validation: boolean, ml: boolean): OutputRow[] {
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
  const step = medianStep(times)
  const cross: ResidualDiagnostics['crossCorrelation'] = []
  const independence: NonNullable<ResidualDiagnostics['independence']> = []
  const uAt = new Float64Array(n)
  model.inputs.forEach((inp, i) => {
    const tr = ex.inputs[i]
    if (!tr) return
    sampleTrace(tr, times, inp.interp, uAt)
    const c = crossCorrelation(uAt, e, L)
    cross.push({ input: inp.name, lags: Array.from({ length: 2 * L + 1 }, (_, k) => k - L), values: Array.from(c, (v) => (Number.isFinite(v) ? v : 0)) })
    const it = independenceTest(c, L, n)
    independence.push({ input: inp.name, statistic: fin(it.statistic) ?? 0, dof: it.dof, pValue: fin(it.pValue) ?? 1 })
  })
  const cp = cumulativePeriodogram(e)
  const jb = jarqueBera(e)
  return {
    n, maxLag: L, band95: whiteBand(n),
    autocorrelation: Array.from(r, (v) => (Number.isFinite(v) ? v : 0)),
    ljungBox: { q: Number.isFinite(lb.q) ? lb.q : 0, lags: lb.lags, pValue: Number.isFinite(lb.pValue) ? lb.pValue : 1 },
    crossCorrelation: cross,
    sampleStep: step, timeUnit: model.timeUnit,
    periodogram: cp ? periodogramRow(cp, step) : null,
    normality: jb && Number.isFinite(jb.statistic) ? jb : null,
    independence,
  }
}

const PERIODOGRAM_POINTS = 400

/** The periodogram for storage: frequencies per sheet time unit, thinned evenly to at most 400 points (the test uses all). */
function periodogramRow(cp: NonNullable<ReturnType<typeof cumulativePeriodogram>>, step: number): NonNullable<ResidualDiagnostics['periodogram']> {
  const q = cp.q
  const keep = Math.min(q, PERIODOGRAM_POINTS)
  const frequency: number[] = [0]
  const cumulative: number[] = [0]
  for (let k = 1; k <= keep; k++) {
    const j = Math.round((k * q) / keep) - 1
    frequency.push(step > 0 ? cp.frequency[j] / step : cp.frequency[j])
    cumulative.push(cp.cumulative[j])
  }
  return { frequency, cumulative, q, band: cp.band, d: cp.d, pValue: cp.pValue }
}
