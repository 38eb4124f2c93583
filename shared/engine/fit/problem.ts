/**
 * The fit problem: a compiled sheet, experiments with measured traces, the estimated quantities and
 * the weighting, turned into a bounded least-squares problem (lsq.ts) whose residuals are the weighted
 * output errors of free simulations (output error, not one-step-ahead prediction):
 *
 *   cost = Σ_experiments Σ_outputs Σ_samples w·(ŷ(t_k; θ) − y_k)²
 *
 * and whose Jacobian comes from the engine's forward sensitivities ∂ŷ/∂θ.
 *
 * Estimated quantities, in this order: shared free parameters, local free parameters (one per
 * experiment), estimated initial states (one per experiment).
 *
 * Weighting:
 * - `sheet`: w = 1/σ² with the output's `sigma` (default 1, i.e. weight 1 in internal units);
 * - `equal`: w = 1;
 * - `normalized`: w = 1/var(y) of the measured signal of that output in that experiment — a scaling
 *   aid so that outputs in different units count alike; it is not a noise model;
 * - `ml`: an unknown noise variance per output, estimated jointly with θ by maximum likelihood. The
 *   driver alternates weighted fits and σ̂² = SSE_j/N_j until the weights settle; at the fixed point
 *   the gradient of the ML cost Σ_j N_j/2·ln SSE_j vanishes (the iteratively reweighted scheme of
 *   Bates & Watts, Nonlinear Regression Analysis and Its Applications, 1988, Sec. 4.2.2 for
 *   multiresponse data with unknown diagonal covariance).
 */
import type { CompiledModel } from '../../sheet/compiled'
import type { SimulationRequest, SimulationResult, SolverName } from '../simulate-contract'
import type { ExperimentData, InputTrace } from '../../data/traces'
import { editDistance } from '../../did-you-mean'
import { FitInputError } from './errors'
import { FitAborted, FitTimeout, type LsqProblem } from './lsq'
import type { FitWeighting } from '../../api/fit'

export type Simulate = (model: CompiledModel, req: SimulationRequest) => SimulationResult

export type { ExperimentData }

export interface ProblemSpec {
  experiments: ExperimentData[]
  validation?: ExperimentData[]
  /** new values (internal units) for parameters or states' initial values */
  set?: Record<string, number>
  fix?: string[]
  free?: string[]
  /** bounds (internal units) */
  bounds?: Record<string, [number, number]>
  /** free parameters estimated once per experiment */
  local?: string[]
  /** evaluation only: nothing is estimated, the problem just simulates the records (no "nothing to estimate" error) */
  nothingFree?: boolean
  weighting?: FitWeighting
  /** overrides every experiment's t0 */
  t0?: number
  /**
   * how validation experiments start: 'sheet' (default) from the sheet's initial state, 'estimate'
   * from initial states fitted to each validation record with the parameters frozen at the estimate
   */
  validationStart?: 'sheet' | 'estimate'
}

export interface EstimatedQuantity {
  kind: 'param' | 'state'
  name: string
  /** index into the model's params or states */
  index: number
  /** experiment index for local parameters and initial states, null when shared */
  experiment: number | null
  lower: number
  upper: number
  start: number
}

export interface SimSettings {
  rtol: number
  atol: number
  solver?: SolverName
  signal?: AbortSignal
  maxSteps?: number
  /** absolute deadline (Date.now()) for the whole fit: each simulation gets what is left */
  deadline?: number
}

export interface Observations {
  /** time index and output index of each residual */
  tIdx: Int32Array
  oIdx: Int32Array
  y: Float64Array
  sqrtW: Float64Array
  offset: number
  count: number
}

export interface PreparedExperiment {
  data: ExperimentData
  t0: number
  tOut: Float64Array
  /** index into data.time of each tOut */
  timeIndex: Int32Array
  inputs: (InputTrace | null)[]
  obs: Observations
  /** per estimated quantity: its sensitivity column for this experiment, or −1 */
  sensCol: Int32Array
  sensParams: number[]
  sensStates: number[]
  /** output indices with at least one measurement */
  measuredOutputs: number[]
  /** per output index: number of samples, and the weight in use */
  outputCount: Int32Array
  weights: Float64Array
  /** default step limit: every output time and input sample is a breakpoint, so it grows with the data */
  stepLimit: number
}

export class FitProblem implements LsqProblem {
  readonly model: CompiledModel
  readonly quantities: EstimatedQuantity[]
  readonly n: number
  readonly m: number
  readonly lower: Float64Array
  readonly upper: Float64Array
  readonly start: Float64Array
  readonly names: string[]
  readonly weighting: FitWeighting
  readonly experiments: PreparedExperiment[]
  readonly validation: PreparedExperiment[]
  readonly baseP: Float64Array
  readonly baseX0: Float64Array
  readonly warnings: string[] = []
  /** simulations run so far (counted by the caller's budget reports) */
  simulations = 0
  lastError: string | null = null
  private readonly simulate: Simulate
  private readonly sim: SimSettings
  private readonly pBuf: Float64Array
  private readonly xBuf: Float64Array
  /** the simulated outputs of each fit experiment at the last evaluation */
  readonly lastY: (Float64Array | null)[]

  constructor(model: CompiledModel, spec: ProblemSpec, simulate: Simulate, sim: SimSettings) {
    this.model = model
    this.simulate = simulate
    this.sim = sim
    this.weighting = spec.weighting ?? 'sheet'
    if (spec.experiments.length === 0) throw new FitInputError('a fit needs at least one experiment (a data file)')

    // --- parameter table with overrides
    const paramIdx = new Map(model.params.map((p, i) => [p.name, i]))
    const stateIdx = new Map(model.states.map((s, i) => [s.name, i]))
    const known = (name: string) => paramIdx.has(name) || stateIdx.has(name)
    const suggest = (name: string) => {
      const all = [...paramIdx.keys(), ...stateIdx.keys()]
      const limit = Math.max(1, Math.floor(name.length / 3))
      const scored = all.map((a) => [a, editDistance(a, name)] as const).filter(([, d]) => d <= limit)
      const bestD = Math.min(...scored.map(([, d]) => d))
      const near = scored.filter(([, d]) => d === bestD).map(([a]) => a)
      return near.length ? ` (did you mean ${near.map((x) => `'${x}'`).join(' or ')}?)` : ''
    }
    const p = model.params.map((q) => ({ ...q }))
    const s = model.states.map((q) => ({ ...q }))
    for (const [name, v] of Object.entries(spec.set ?? {})) {
      if (!known(name)) throw new FitInputError(`--set ${name}: the sheet has no parameter or state named '${name}'${suggest(name)}`, { kind: 'argument' })
      if (!Number.isFinite(v)) throw new FitInputError(`--set ${name}: the value must be a finite number`, { kind: 'argument' })
      if (paramIdx.has(name)) p[paramIdx.get(name)!].value = v
      else s[stateIdx.get(name)!].initial = v
    }
    for (const [name, b] of Object.entries(spec.bounds ?? {})) {
      if (!known(name)) throw new FitInputError(`--bounds ${name}: the sheet has no parameter or state named '${name}'${suggest(name)}`, { kind: 'argument' })
      const [lo, hi] = b
      if (!(Number.isFinite(lo) && Number.isFinite(hi))) throw new FitInputError(`--bounds ${name}: both bounds must be finite numbers`, { kind: 'argument' })
      if (!(lo < hi)) throw new FitInputError(`--bounds ${name}: the lower bound (${lo}) must be below the upper bound (${hi})`, { kind: 'argument' })
      const t = paramIdx.has(name) ? p[paramIdx.get(name)!] : s[stateIdx.get(name)!]
      t.lower = lo
      t.upper = hi
    }
    for (const name of spec.fix ?? []) {
      if (!known(name)) throw new FitInputError(`--fix ${name}: the sheet has no parameter or state named '${name}'${suggest(name)}`, { kind: 'argument' })
      if (paramIdx.has(name)) p[paramIdx.get(name)!].fixed = true
      else s[stateIdx.get(name)!].estimate = false
    }
    for (const name of spec.free ?? []) {
      if (!known(name)) throw new FitInputError(`--free ${name}: the sheet has no parameter or state named '${name}'${suggest(name)}`, { kind: 'argument' })
      const t = paramIdx.has(name) ? p[paramIdx.get(name)!] : s[stateIdx.get(name)!]
      if (t.lower === null || t.upper === null) {
        throw new FitInputError(`--free ${name}: '${name}' has no bounds; give them in the sheet (in [lo, hi]) or with --bounds ${name}=lo:hi`, { kind: 'argument' })
      }
      if (paramIdx.has(name)) p[paramIdx.get(name)!].fixed = false
      else s[stateIdx.get(name)!].estimate = true
    }
    const localSet = new Set(spec.local ?? [])
    for (const name of localSet) {
      if (!paramIdx.has(name)) throw new FitInputError(`--local ${name}: the sheet has no parameter named '${name}'${suggest(name)}`, { kind: 'argument' })
      if (p[paramIdx.get(name)!].fixed) throw new FitInputError(`--local ${name}: '${name}' is fixed; only a free parameter can be local to each experiment`, { kind: 'argument' })
    }

    const touched = new Set([...Object.keys(spec.set ?? {}), ...Object.keys(spec.bounds ?? {}), ...(spec.free ?? [])])
    const checkBox = (kind: string, name: string, lo: number | null, hi: number | null, v: number) => {
      const where = { kind: touched.has(name) ? ('argument' as const) : ('data' as const) }
      const sym = paramIdx.has(name) && kind === 'parameter' ? model.params[paramIdx.get(name)!] : model.states[stateIdx.get(name)!]
      const dec = (x: number) => String(Number(((x - sym.offset) / sym.scale).toPrecision(10)))
      const unit = sym.unit ? ` ${sym.unit}` : ''
      if (lo === null || hi === null || !Number.isFinite(lo) || !Number.isFinite(hi)) {
        throw new FitInputError(`${kind} '${name}' is free but has no bounds; give them in the sheet or with --bounds ${name}=lo:hi`, where)
      }
      if (!(lo < hi)) throw new FitInputError(`${kind} '${name}': the lower bound (${dec(lo)}${unit}) must be below the upper bound (${dec(hi)}${unit})`, where)
      if (!(v >= lo && v <= hi)) {
        throw new FitInputError(`${kind} '${name}': the start value ${dec(v)}${unit} lies outside its bounds [${dec(lo)}, ${dec(hi)}]${unit}`, where)
      }
    }

    const nExp = spec.experiments.length
    const quantities: EstimatedQuantity[] = []
    p.forEach((q, i) => {
      if (q.fixed || localSet.has(q.name)) return
      checkBox('parameter', q.name, q.lower, q.upper, q.value)
      quantities.push({ kind: 'param', name: q.name, index: i, experiment: null, lower: q.lower!, upper: q.upper!, start: q.value })
    })
    p.forEach((q, i) => {
      if (q.fixed || !localSet.has(q.name)) return
      checkBox('parameter', q.name, q.lower, q.upper, q.value)
      for (let e = 0; e < nExp; e++) {
        quantities.push({ kind: 'param', name: q.name, index: i, experiment: e, lower: q.lower!, upper: q.upper!, start: q.value })
      }
    })
    s.forEach((q, i) => {
      if (!q.estimate) return
      checkBox('initial state', q.name, q.lower, q.upper, q.initial)
      for (let e = 0; e < nExp; e++) {
        quantities.push({ kind: 'state', name: q.name, index: i, experiment: e, lower: q.lower!, upper: q.upper!, start: q.initial })
      }
    })
    if (quantities.length === 0 && !spec.nothingFree) throw new FitInputError('nothing to estimate: every parameter is fixed and no initial state is estimated (free one with --free name)')
    this.quantities = quantities
    this.n = quantities.length
    this.lower = Float64Array.from(quantities, (q) => q.lower)
    this.upper = Float64Array.from(quantities, (q) => q.upper)
    this.start = Float64Array.from(quantities, (q) => q.start)
    this.names = quantities.map((q) => (q.experiment === null ? q.name : `${q.name}[${spec.experiments[q.experiment].name}]`))
    this.baseP = Float64Array.from(p, (q) => q.value)
    this.baseX0 = Float64Array.from(s, (q) => q.initial)
    this.pBuf = new Float64Array(model.np)
    this.xBuf = new Float64Array(model.nx)

    // --- experiments
    let offset = 0
    this.experiments = spec.experiments.map((d, e) => {
      const prep = this.prepare(d, e, spec.t0, offset, true)
      offset += prep.obs.count
      return prep
    })
    this.m = offset
    this.validation = (spec.validation ?? []).map((d, e) => this.prepare(d, -1 - e, spec.t0, 0, false))
    if (this.m < this.n) {
      throw new FitInputError(`fewer samples (${this.m} measured values) than estimated quantities (${this.n}: ${this.names.join(', ')})`)
    }
    if (this.m === this.n) this.warnings.push('as many samples as estimated quantities: no degrees of freedom are left for intervals')
    this.lastY = this.experiments.map(() => null)
    this.setWeights()
  }

  private prepare(d: ExperimentData, e: number, t0Override: number | undefined, offset: number, forFit: boolean): PreparedExperiment {
    const model = this.model
    const file = d.source ?? d.name
    const rowOf = (k: number) => (d.rows ? d.rows[k] : k + 2)
    const t0 = t0Override ?? d.t0 ?? 0
    if (!Number.isFinite(t0)) throw new FitInputError('t0 must be a finite number', { file })
    const time = d.time
    for (let k = 1; k < time.length; k++) {
      if (!(time[k] > time[k - 1])) {
        throw new FitInputError(time[k] === time[k - 1] ? 'duplicate time' : 'time is not increasing', { file, row: rowOf(k), column: 'time' })
      }
    }
    let first = 0
    while (first < time.length && time[first] < t0) first++
    if (first > 0) this.warnings.push(`${file}: ${first} sample(s) before t0 = ${t0} ignored`)
    const timeIndex = new Int32Array(time.length - first)
    for (let k = 0; k < timeIndex.length; k++) timeIndex[k] = first + k
    const tOut = time.slice(first)

    const measuredOutputs: number[] = []
    const outputCount = new Int32Array(model.ny)
    model.outputs.forEach((o, j) => {
      const col = d.outputs[o.name]
      if (!col) return
      let count = 0
      for (let k = first; k < time.length; k++) if (Number.isFinite(col[k])) count++
      if (count === 0) throw new FitInputError(`output '${o.name}' has no numeric value${first > 0 ? ` at or after t0 = ${t0}` : ''}`, { file, column: o.name })
      outputCount[j] = count
      measuredOutputs.push(j)
    })
    if (measuredOutputs.length === 0) {
      throw new FitInputError(`no output column: the file needs a column named like one of the sheet's outputs (${model.outputs.map((o) => o.name).join(', ')})`, { file })
    }
    const total = measuredOutputs.reduce((a, j) => a + outputCount[j], 0)
    const tIdx = new Int32Array(total)
    const oIdx = new Int32Array(total)
    const y = new Float64Array(total)
    let c = 0
    for (let k = 0; k < tOut.length; k++) {
      for (const j of measuredOutputs) {
        const v = d.outputs[model.outputs[j].name][first + k]
        if (!Number.isFinite(v)) continue
        tIdx[c] = k
        oIdx[c] = j
        y[c] = v
        c++
      }
    }
    const inputs: (InputTrace | null)[] = model.inputs.map((inp) => d.inputs[inp.name] ?? null)
    if (forFit) {
      model.inputs.forEach((inp, i) => {
        if (!inputs[i]) this.warnings.push(`${file}: no column for input '${inp.name}': its sheet value is used`)
      })
    }
    // sensitivity columns
    const sensParams: number[] = []
    const sensStates: number[] = []
    const sensCol = new Int32Array(this.quantities.length).fill(-1)
    const paramCols: number[] = []
    const stateCols: number[] = []
    this.quantities.forEach((q, qi) => {
      if (q.experiment !== null && q.experiment !== e) return
      if (q.kind === 'param') {
        paramCols.push(qi)
        sensParams.push(q.index)
      } else {
        stateCols.push(qi)
        sensStates.push(q.index)
      }
    })
    paramCols.forEach((qi, k) => (sensCol[qi] = k))
    stateCols.forEach((qi, k) => (sensCol[qi] = sensParams.length + k))
    return {
      data: d, t0, tOut, timeIndex, inputs,
      obs: { tIdx, oIdx, y, sqrtW: new Float64Array(total).fill(1), offset, count: total },
      sensCol, sensParams, sensStates, measuredOutputs, outputCount,
      weights: new Float64Array(model.ny).fill(1),
      stepLimit: Math.max(100_000, 20 * (tOut.length + inputs.reduce((a, tr) => a + (tr ? tr.t.length : 0), 0))),
    }
  }

  /** Set the weights for the chosen weighting (ml: the starting weights, from the sheet's sigma or 1). */
  private setWeights(): void {
    for (const ex of [...this.experiments, ...this.validation]) {
      for (const j of ex.measuredOutputs) {
        let w = 1
        const sigma = this.model.outputs[j].sigma
        if (this.weighting === 'sheet' || this.weighting === 'ml') {
          w = sigma !== null && sigma > 0 ? 1 / (sigma * sigma) : 1
        } else if (this.weighting === 'normalized') {
          const v = variance(ex.obs.y, ex.obs.oIdx, j)
          if (!(v > 0)) {
            throw new FitInputError(`output '${this.model.outputs[j].name}' is constant, so it cannot be normalised by its variance (use --weighting equal or sheet)`, { file: ex.data.source ?? ex.data.name, column: this.model.outputs[j].name })
          }
          w = 1 / v
        }
        ex.weights[j] = w
      }
      this.applyWeights(ex)
    }
  }

  private applyWeights(ex: PreparedExperiment): void {
    const { oIdx, sqrtW } = ex.obs
    for (let i = 0; i < sqrtW.length; i++) sqrtW[i] = Math.sqrt(ex.weights[oIdx[i]])
  }

  /** ml weighting: set w_j = N_j/SSE_j per output (pooled over experiments) from unweighted errors. */
  updateMlWeights(unweightedSse: Float64Array, counts: Int32Array): number {
    let maxChange = 0
    for (let j = 0; j < this.model.ny; j++) {
      if (counts[j] === 0) continue
      const s2 = unweightedSse[j] / counts[j]
      const w = s2 > 0 ? 1 / s2 : 1e300
      for (const ex of this.experiments) {
        if (ex.outputCount[j] === 0) continue
        maxChange = Math.max(maxChange, Math.abs(w - ex.weights[j]) / Math.max(w, ex.weights[j]))
        ex.weights[j] = w
      }
      for (const ex of this.validation) if (ex.outputCount[j] > 0) ex.weights[j] = w
    }
    for (const ex of [...this.experiments, ...this.validation]) this.applyWeights(ex)
    return maxChange
  }

  /** Fix the weight of each output index (ml weighting's final weights). */
  setOutputWeights(weights: ArrayLike<number>): void {
    for (const ex of [...this.experiments, ...this.validation]) {
      for (const j of ex.measuredOutputs) ex.weights[j] = weights[j]
      this.applyWeights(ex)
    }
  }

  /** Parameter vector and initial state of experiment e at θ. Returns whether x0 must be passed. */
  fillExperiment(theta: ArrayLike<number>, e: number, p: Float64Array, x0: Float64Array): boolean {
    p.set(this.baseP)
    x0.set(this.baseX0)
    let hasX0 = false
    for (let q = 0; q < this.n; q++) {
      const qq = this.quantities[q]
      if (qq.experiment !== null && qq.experiment !== e) continue
      if (qq.kind === 'param') p[qq.index] = theta[q]
      else {
        x0[qq.index] = theta[q]
        hasX0 = true
      }
    }
    return hasX0
  }

  /** Run one experiment's simulation. Throws FitAborted when aborted; returns null on failure. */
  simulateExperiment(
    ex: PreparedExperiment, p: Float64Array, x0: Float64Array | undefined,
    withSens: boolean | { params: number[]; initialStates: number[] },
  ): SimulationResult | null {
    if (this.sim.signal?.aborted) throw new FitAborted()
    const left = this.sim.deadline !== undefined ? this.sim.deadline - Date.now() : undefined
    if (left !== undefined && left <= 0) throw new FitTimeout()
    this.simulations++
    try {
      return this.simulate(this.model, {
        t0: ex.t0,
        tOut: ex.tOut,
        inputs: ex.inputs,
        p,
        x0,
        sensitivities: withSens === true ? { params: ex.sensParams, initialStates: ex.sensStates } : withSens || undefined,
        solver: this.sim.solver,
        rtol: this.sim.rtol,
        atol: this.sim.atol,
        maxSteps: this.sim.maxSteps ?? ex.stepLimit,
        signal: this.sim.signal,
        timeBudgetMs: left,
      })
    } catch (err) {
      if (this.sim.signal?.aborted || (err instanceof Error && err.name === 'AbortedError')) throw new FitAborted()
      if (err instanceof Error && err.name === 'TimeBudgetError' && this.sim.deadline !== undefined) throw new FitTimeout()
      this.lastError = err instanceof Error ? err.message : String(err)
      return null
    }
  }

  failure(): string | null {
    return this.lastError
  }

  evaluate(theta: Float64Array, r: Float64Array, jac: Float64Array | null): boolean {
    const m = this.m
    this.lastError = null
    for (let e = 0; e < this.experiments.length; e++) {
      const ex = this.experiments[e]
      const hasX0 = this.fillExperiment(theta, e, this.pBuf, this.xBuf)
      const res = this.simulateExperiment(ex, this.pBuf, hasX0 ? this.xBuf : undefined, jac !== null)
      if (!res) return false
      this.lastY[e] = res.y
      const ny = this.model.ny
      const { tIdx, oIdx, y, sqrtW, offset, count } = ex.obs
      const yh = res.y
      for (let i = 0; i < count; i++) r[offset + i] = sqrtW[i] * (yh[tIdx[i] * ny + oIdx[i]] - y[i])
      if (jac) {
        const dy = res.dy
        const ns = ex.sensParams.length + ex.sensStates.length
        if (!dy && ns > 0) {
          this.lastError = 'the simulation returned no sensitivities'
          return false
        }
        for (let q = 0; q < this.n; q++) {
          const col = ex.sensCol[q]
          const base = q * m + offset
          if (col < 0) {
            for (let i = 0; i < count; i++) jac[base + i] = 0
          } else {
            for (let i = 0; i < count; i++) jac[base + i] = sqrtW[i] * dy![(tIdx[i] * ny + oIdx[i]) * ns + col]
          }
        }
      }
    }
    return true
  }

  /** Unweighted SSE and sample count per output over the fit experiments at θ (for ml weighting). */
  unweightedSsePerOutput(theta: Float64Array): { sse: Float64Array; counts: Int32Array } | null {
    const r = new Float64Array(this.m)
    if (!this.evaluate(theta, r, null)) return null
    const sse = new Float64Array(this.model.ny)
    const counts = new Int32Array(this.model.ny)
    for (const ex of this.experiments) {
      const { oIdx, sqrtW, offset, count } = ex.obs
      for (let i = 0; i < count; i++) {
        const e = r[offset + i] / sqrtW[i]
        sse[oIdx[i]] += e * e
        counts[oIdx[i]]++
      }
    }
    return { sse, counts }
  }
}

function variance(y: Float64Array, oIdx: Int32Array, j: number): number {
  let n = 0
  let mean = 0
  for (let i = 0; i < y.length; i++) if (oIdx[i] === j) {
    n++
    mean += y[i]
  }
  mean /= n || 1
  let s = 0
  for (let i = 0; i < y.length; i++) if (oIdx[i] === j) s += (y[i] - mean) * (y[i] - mean)
  return n > 1 ? s / (n - 1) : 0
}
