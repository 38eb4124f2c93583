/**
 * simulate(model, request): integrate a compiled sheet over the requested output times, with
 * measured input traces and, on request, forward sensitivities ∂x/∂θ and ∂y/∂θ.
 *
 * - Starts at t0 (default 0), never at the first sample of a trace.
 * - Integrates segment by segment between input breakpoints (every sample time, shifted by each
 *   delay for delayed reads); the solver lands on each breakpoint and keeps its step size.
 * - Outputs come at exactly the requested times from the method's dense output.
 * - Steady initial states are solved first (steady.ts); discrete sheets iterate (discrete.ts).
 * - Sensitivity error control: ∂x_i/∂θ_j · |θ_j| (|θ_j| = 1 when θ_j = 0) is measured like state i
 *   by the explicit methods; the stiff method measures the states only unless `errorControl: true`;
 *   `errorControl: false` leaves sensitivities out of every method's error control.
 * - Work buffers are cached per model and sensitivity layout: repeated calls (a fit) do not allocate
 *   beyond the result arrays.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { SimulationRequest, SimulationResult, SolverName } from './simulate-contract'
import { AbortedError, SimulationRequestError, StepLimitError, StepSizeTooSmallError, adviceFor, fmt, type RunContext } from './errors'
import { InputSet } from './inputs'
import type { SensSpec } from './system'
import { solveSteady, steadyIndices } from './steady'
import { simulateDiscrete } from './discrete'
import { workspace, writeOut, type Workspace } from './simulation-workspace'
import { AutoSolver } from './solvers/auto'
import { OdexSolver } from './solvers/odex'
import { Rk45 } from './solvers/rk45'
import { Rosenbrock } from './solvers/rosenbrock'
import { resetModes } from './events'
import { now, type OdeSolver, type SolverLimits, type Tolerances } from './solvers/types'

export const DEFAULT_RTOL = 1e-6
export const DEFAULT_MAX_STEPS = 100_000

/** thrown from the step observer to end a solver's advance at an event (one object, never allocated again) */
const EVENT_STOP = Object.freeze({ eventStop: true })

function solverFor(ws: Workspace, name: SolverName): OdeSolver {
  let s = ws.solvers[name]
  if (!s) {
    s = name === 'rk45' ? new Rk45() : name === 'stiff' ? new Rosenbrock() : name === 'odex' ? new OdexSolver() : new AutoSolver()
    ws.solvers[name] = s
  }
  return s
}

/** validated sensitivity layout θ = [params…, initialStates…] */
function sensLayout(model: CompiledModel, req: SimulationRequest): SensSpec[] {
  const out: SensSpec[] = []
  const sp = req.sensitivities
  if (!sp) return out
  for (const j of sp.params) {
    if (!Number.isInteger(j) || j < 0 || j >= model.np) throw new SimulationRequestError(`sensitivity parameter index ${j} out of range 0..${model.np - 1}`)
    const delaySlots: number[] = []
    for (let k = 0; k < model.nd; k++) if (model.delays[k].param === j) delaySlots.push(model.nu + k)
    out.push({ param: j, state: -1, delaySlots })
  }
  for (const i of sp.initialStates) {
    if (!Number.isInteger(i) || i < 0 || i >= model.nx) throw new SimulationRequestError(`sensitivity state index ${i} out of range 0..${model.nx - 1}`)
    out.push({ param: -1, state: i, delaySlots: [] })
  }
  return out
}

function validate(model: CompiledModel, req: SimulationRequest, t0: number): void {
  const tOut = req.tOut
  if (!(tOut instanceof Float64Array)) throw new SimulationRequestError('tOut must be a Float64Array of output times')
  if (!Number.isFinite(t0)) throw new SimulationRequestError(`t0 must be finite, got ${t0}`)
  for (let i = 0; i < tOut.length; i++) {
    const t = tOut[i]
    if (!Number.isFinite(t)) throw new SimulationRequestError(`output time #${i + 1} is ${t}`)
    if (t < t0) throw new SimulationRequestError(`output time #${i + 1} (t = ${fmt(t)}) is before t0 = ${fmt(t0)}`)
    if (i > 0 && t < tOut[i - 1]) throw new SimulationRequestError(`output times out of order: #${i + 1} (t = ${fmt(t)}) comes after t = ${fmt(tOut[i - 1])}`)
  }
  if (req.p && req.p.length !== model.np) throw new SimulationRequestError(`p has ${req.p.length} entries, the model has ${model.np} parameters`)
  if (req.x0 && req.x0.length !== model.nx) throw new SimulationRequestError(`x0 has ${req.x0.length} entries, the model has ${model.nx} states`)
  if (req.rtol instanceof Float64Array && req.rtol.length !== model.nx) throw new SimulationRequestError(`rtol has ${req.rtol.length} entries, the model has ${model.nx} states`)
  const rt = req.rtol ?? DEFAULT_RTOL
  for (let i = 0; i < model.nx; i++) {
    const r = typeof rt === 'number' ? rt : rt[i]
    if (!(r > 0 && r < 1)) throw new SimulationRequestError(`rtol${model.nx > 1 && typeof rt !== 'number' ? ` for state '${model.states[i].name}'` : ''} must be in (0, 1), got ${r}`)
  }
  if (req.atol instanceof Float64Array && req.atol.length !== model.nx) throw new SimulationRequestError(`atol has ${req.atol.length} entries, the model has ${model.nx} states`)
  if (req.maxSteps !== undefined && !(req.maxSteps >= 1)) throw new SimulationRequestError(`maxSteps must be >= 1, got ${req.maxSteps}`)
  if (req.solver && !['auto', 'rk45', 'odex', 'stiff'].includes(req.solver)) throw new SimulationRequestError(`unknown solver '${req.solver}'`)
}

export function simulate(model: CompiledModel, req: SimulationRequest): SimulationResult {
  const t0 = req.t0 ?? 0
  validate(model, req, t0)
  if (req.signal?.aborted) throw new AbortedError(t0)
  const sens = sensLayout(model, req)
  const ws = workspace(model, sens)
  const { sys, tol, zStart: z0 } = ws
  // every run starts in the sheet's modes (the steady solve too)
  resetModes(model)
  const nx = model.nx
  const ns = sens.length
  const tOut = req.tOut
  const nt = tOut.length
  const tEnd = nt > 0 ? tOut[nt - 1] : t0

  // parameters, inputs
  const p = sys.p
  if (req.p) p.set(req.p)
  else for (let j = 0; j < model.np; j++) p[j] = model.params[j].value
  const inputs = new InputSet(model, req.inputs)
  const warnings = inputs.prepare(model, p, t0, tEnd)
  sys.inputs = inputs

  // initial state and sensitivities
  z0.fill(0)
  for (let i = 0; i < nx; i++) z0[i] = req.x0 ? req.x0[i] : model.states[i].initial
  for (let j = 0; j < ns; j++) if (sens[j].state >= 0) z0[(j + 1) * nx + sens[j].state] = 1
  const steady = steadyIndices(model)
  if (steady.length > 0) {
    inputs.evalAt(t0, ws.uAt, ws.duAt)
    for (let j = 0; j < ns; j++) if (sens[j].state >= 0 && model.states[sens[j].state].steady) z0[(j + 1) * nx + sens[j].state] = 0
    solveSteady(model, t0, z0, p, ws.uAt, steady, ns > 0 ? sens : null, ns > 0 ? z0.subarray(nx) : null, ws.duAt)
  }
  const x0 = Float64Array.from(z0.subarray(0, nx))

  // tolerances
  const rt = req.rtol ?? DEFAULT_RTOL
  for (let i = 0; i < nx; i++) {
    const rtol = typeof rt === 'number' ? rt : rt[i]
    tol.rtol[i] = rtol
    const a = req.atol === undefined ? rtol * 1e-3 : typeof req.atol === 'number' ? req.atol : req.atol[i]
    if (!(a > 0)) throw new SimulationRequestError(`atol for state '${model.states[i].name}' must be > 0, got ${a}`)
    tol.atol[i] = a
  }
  // errorControl: true → sensitivities in every method's error norm; false → in none; not given →
  // in the explicit methods' (rk45, odex) but not the stiff method's (rosenbrock.ts, error control)
  const sensCtl = req.sensitivities?.errorControl !== false
  tol.stiffSensitivities = req.sensitivities?.errorControl === true
  for (let i = 0; i < nx; i++) tol.weight[i] = 1
  for (let j = 0; j < ns; j++) {
    const th = sens[j].param >= 0 ? p[sens[j].param] : x0[sens[j].state]
    const w = sensCtl ? (th === 0 || !Number.isFinite(th) ? 1 : Math.abs(th)) : 0
    for (let i = 0; i < nx; i++) tol.weight[(j + 1) * nx + i] = w
  }

  const res: SimulationResult = {
    t: Float64Array.from(tOut),
    y: new Float64Array(nt * model.ny),
    x: new Float64Array(nt * nx),
    dy: ns > 0 ? new Float64Array(nt * model.ny * ns) : null,
    dx: ns > 0 ? new Float64Array(nt * nx * ns) : null,
    x0,
    stats: { method: 'rk45', switched: false, steps: 0, rejected: 0, rhsEvals: 0, jacEvals: 0, luDecomps: 0, elapsedMs: 0 },
    warnings,
  }
  const start = now()
  const limits: SolverLimits = {
    maxSteps: req.maxSteps ?? DEFAULT_MAX_STEPS,
    deadline: req.timeBudgetMs !== undefined ? start + req.timeBudgetMs : Infinity,
    budgetMs: req.timeBudgetMs ?? 0,
    signal: req.signal ?? null,
    stateNames: ws.stateNames,
    fixedStep: 0,
  }

  if (model.kind === 'discrete') {
    simulateDiscrete(model, sys, inputs, z0, t0, res, limits, ws)
    res.stats.elapsedMs = now() - start
    return res
  }

  const name: SolverName = req.solver ?? 'auto'
  const solver = solverFor(ws, name)
  let iOut = 0
  // outputs at t0
  while (iOut < nt && tOut[iOut] <= t0) writeOut(model, ws, inputs, z0, iOut++, tOut[iOut - 1], res)
  // a cached solver keeps the state of its last run: report its switch only when it ran now
  const ran = iOut < nt
  if (ran) {
    solver.start(sys, tol, limits, t0, z0, 0)
    const bps = inputs.breakpoints(t0, tEnd)
    const zd = ws.zScratch
    /** outputs up to `limit` (inclusive or not) from the last step */
    const flush = (limit: number, inclusive: boolean): void => {
      while (iOut < nt && (inclusive ? tOut[iOut] <= limit : tOut[iOut] < limit)) {
        const tq = tOut[iOut]
        if (tq === solver.t) writeOut(model, ws, inputs, solver.z, iOut, tq, res)
        else {
          solver.dense(tq, zd)
          writeOut(model, ws, inputs, zd, iOut, tq, res)
        }
        iOut++
      }
    }
    const obs = (_a: number, b: number): void => flush(b, true)
    const mon = ws.events
    /** steps to b; the first event in a step ends it there (events.ts) and the solver restarts after it */
    let te = 0, hNext = 0
    const obsEvents = (ta: number, tb: number): void => {
      const ev = mon!
      te = ev.locate(solver, ta, tb)
      if (te === Infinity) { flush(tb, true); return }
      flush(te, false)
      solver.dense(te, ws.zEvent)
      hNext = solver.h
      ev.fire(te, ws.zEvent)
      throw EVENT_STOP
    }
    const advanceEvents = (b: number): void => {
      while (solver.t < b) {
        try {
          solver.advance(b, obsEvents)
        } catch (e) {
          if (e !== EVENT_STOP) throw e
          solver.restartAt(te, ws.zEvent, hNext)
        }
      }
    }
    const tauHold = sens.some((s) => s.delaySlots.some((slot) => inputs.isHoldTrace(slot)))
    // a delay parameter's sensitivity equations contain the delayed input's slope, which jumps at
    // every sample of a linear trace (a kink of u is a jump of u')
    const tauSlope = sens.some((s) => s.delaySlots.some((slot) => inputs.hasTrace(slot) && !inputs.isHoldTrace(slot)))
    // at a breakpoint the right-hand side jumps only where a hold trace changes value (or, with
    // delay sensitivities, where a delayed slope changes): then the solver refreshes its
    // carried-over derivative (one extra evaluation), otherwise it just goes on
    const checkJumps = tauHold || inputs.hasHold
    const nSlots = inputs.nSlots
    let a = t0
    try {
      for (let k = 0; k <= bps.length; k++) {
        // cancellation between input segments too (the solvers check it at every step)
        if (limits.signal !== null && limits.signal.aborted) throw new AbortedError(a)
        const b = k < bps.length ? bps[k] : tEnd
        if (k > 0 && checkJumps) inputs.eval(a, ws.uAt) // left limit at the breakpoint
        if (k > 0 && tauSlope) inputs.slope(ws.slopeLeft)
        inputs.setSegment(0.5 * (a + b))
        if (k === 0 && mon !== null) mon.begin(inputs, t0, tEnd, solver.z)
        if (k > 0 && (checkJumps || tauSlope)) {
          let jump = false
          if (checkJumps) {
            inputs.eval(a, ws.duAt)
            for (let i = 0; i < nSlots; i++) if (ws.uAt[i] !== ws.duAt[i]) jump = true
          }
          if (tauSlope && !jump) {
            inputs.slope(ws.slopeRight)
            for (let j = 0; j < ns && !jump; j++) {
              const slots = sens[j].delaySlots
              for (let q = 0; q < slots.length; q++) if (ws.slopeLeft[slots[q]] !== ws.slopeRight[slots[q]]) jump = true
            }
          }
          if (jump) {
            if (tauHold) tauJumps(model, ws, inputs, solver.z, a)
            solver.breakpoint()
          }
        }
        if (mon === null) solver.advance(b, obs)
        else advanceEvents(b)
        a = b
      }
    } catch (e) {
      resetModes(model)
      throw withAdvice(e, solver, limits, tol, ns > 0 && sensCtl, a)
    }
    if (mon !== null) {
      res.events = mon.log
      res.warnings.push(...mon.warnings)
      resetModes(model)
    }
    const c = solver.counters
    res.stats.steps = c.steps
    res.stats.rejected = c.rejected
    res.stats.rhsEvals = c.rhsEvals
    res.stats.jacEvals = c.jacEvals
    res.stats.luDecomps = c.luDecomps
  }
  if (solver instanceof AutoSolver) {
    res.stats.switched = ran && solver.switched
    res.stats.method = res.stats.switched ? `auto (rk45, switched to stiff at t = ${fmt(solver.switchedAt ?? 0)})` : 'auto (rk45)'
  } else res.stats.method = solver.name
  res.stats.elapsedMs = now() - start
  return res
}

/** A step-limit or step-size failure rethrown with advice on what to try next, given what the run used. */
function withAdvice(e: unknown, solver: OdeSolver, limits: SolverLimits, tol: Tolerances, sens: boolean, tSeg: number): unknown {
  if (!(e instanceof StepLimitError || e instanceof StepSizeTooSmallError)) return e
  let rtol = Infinity
  for (let i = 0; i < tol.rtol.length; i++) rtol = Math.min(rtol, tol.rtol[i])
  const auto = solver instanceof AutoSolver ? solver : null
  const switched = auto !== null && auto.switched
  // the stiff method measures the sensitivities only when asked to (errorControl: true)
  const measured = sens && (solver.name === 'stiff' || switched ? tol.stiffSensitivities === true : true)
  const ctx: RunContext = { solver: solver.name, switched, rtol, maxSteps: limits.maxSteps, sensitivities: measured }
  const t = e.t ?? tSeg
  return e instanceof StepLimitError ? new StepLimitError(e.maxSteps, t, adviceFor('step_limit', ctx)) : new StepSizeTooSmallError(t, e.h, adviceFor('step_too_small', ctx))
}

/**
 * Where a delayed hold trace jumps, the jump time b = t_i + tau/s moves with tau, and the state
 * sensitivity jumps by ∂x/∂tau⁺ = ∂x/∂tau⁻ + (f⁻ − f⁺)·∂b/∂tau, ∂b/∂tau = 1/s (sensitivities at
 * discontinuities with a parameter-dependent switching time; e.g. Rozenvasser 1967, Galán, Feehery &
 * Barton, Appl. Numer. Math. 31 (1999) 17–47, eq. (14) with a state-independent switching function).
 * f⁺ uses only the delayed slot's new value, so jumps of other inputs at the same time do not count.
 * ws.uAt holds the left-limit input values on entry.
 */
function tauJumps(model: CompiledModel, ws: Workspace, inputs: InputSet, z: Float64Array, t: number): void {
  const nx = model.nx
  const sens = ws.sys.sens
  const uMinus = ws.uAt
  const uPlus = ws.duAt
  inputs.eval(t, uPlus)
  const p = ws.sys.p
  const spt = model.secondsPerTimeUnit
  const fA = ws.fLeft
  const fB = ws.fRight
  let ready = false
  for (let j = 0; j < sens.length; j++) {
    const slots = sens[j].delaySlots
    let changed = false
    for (const slot of slots) if (inputs.isHoldTrace(slot) && uPlus[slot] !== uMinus[slot]) changed = true
    if (!changed) continue
    if (!ready) {
      model.rhs(t, z, p, uMinus, fA)
      ready = true
    }
    ws.uRight.set(uMinus)
    for (const slot of slots) if (inputs.isHoldTrace(slot)) ws.uRight[slot] = uPlus[slot]
    model.rhs(t, z, p, ws.uRight, fB)
    const off = (j + 1) * nx
    for (let i = 0; i < nx; i++) z[off + i] += (fA[i] - fB[i]) / spt
  }
}
