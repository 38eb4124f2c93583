/**
 * analyzeModel(model, request): the hand-over analysis of a compiled sheet with given parameters and
 * constant inputs — operating point (or a point of a simulation), linearisation, poles, zeros, DC
 * gains, controllability/observability, frequency and step responses, and first-order uncertainty of
 * poles, gains and frequency response from the fit's covariance. Everything returned is plain JSON in
 * declared units (shared/api/handover.ts).
 */
import { toDeclared, type CompiledModel } from '../../sheet/compiled'
import type { LinearAnalysis } from '../../api/handover'
import { RESULT_CAUTION } from '../../api/runs'
import { simulate } from '../simulate'
import { SimulationError } from '../errors'
import { AnalysisInputError } from './errors'
import { eigenvalues, type Eigenvalues } from './eigen'
import { toRows } from './dense'
import { findOperatingPoints, type OperatingPointResult } from './operating-point'
import { linearize, type LinearModel } from './linearize'
import { RANK_TOL, controllabilityRank, dcGain, observabilityRank, poleInfo } from './properties'
import { transmissionZeros } from './zeros'
import { ZERO_RANK_TOL, systemZeros, type SystemZeros } from './system-zeros'
import { LinearAlgebraError } from './errors'
import { defaultFrequencies, frequencyResponse } from './frequency-response'
import { linearStep } from './step-response'
import { inputSlots } from './parameters'
import { matchPoles, propagate, type ParameterCovariance } from './uncertainty'

export interface AnalysisRequest {
  /** parameters, internal units */
  p: Float64Array
  /** nu constant inputs, internal units */
  u: Float64Array
  at: 'steady' | number
  provenance: string
  covariance?: ParameterCovariance | null
  /** number of frequencies (0: none), default 200 */
  frequencies?: number
  steps?: boolean
}

const fin = (v: number): number | null => (Number.isFinite(v) ? v : null)
const finArr = (a: ArrayLike<number>): (number | null)[] => Array.from(a, fin)

interface Point {
  lin: LinearModel
  poles: Eigenvalues
  op: OperatingPointResult | null
  xInternal: Float64Array
}

/** the point and its linearisation for parameters p; guess: where Newton starts */
function pointFor(model: CompiledModel, p: Float64Array, u: Float64Array, at: 'steady' | number, guess: Float64Array | undefined, maxStarts: number): Point {
  const slots = inputSlots(model, u)
  if (at === 'steady') {
    const from = inputSlots(model, Float64Array.from(model.inputs, (s) => s.value))
    const op = findOperatingPoints(model, { p, u: slots, guess, maxStarts, from })
    if (op.status === 'none') throw new AnalysisInputError(op.messages.join('; '))
    const x = op.solutions[0].x
    const lin = linearize(model, 0, x, p, slots)
    return { lin, poles: eigenvalues(lin.A, lin.nx), op, xInternal: x }
  }
  const constant: CompiledModel = { ...model, inputs: model.inputs.map((s, i) => ({ ...s, value: u[i] })) }
  const res = simulate(constant, { tOut: Float64Array.of(at), p, rtol: 1e-9 })
  const x = res.x.slice(0, model.nx)
  const lin = linearize(model, at, x, p, slots)
  return { lin, poles: eigenvalues(lin.A, lin.nx), op: null, xInternal: x }
}

export function analyzeModel(model: CompiledModel, req: AnalysisRequest): LinearAnalysis {
  if (req.p.length !== model.np) throw new AnalysisInputError(`expected ${model.np} parameter values, got ${req.p.length}`)
  if (req.u.length < model.nu) throw new AnalysisInputError(`expected ${model.nu} input values, got ${req.u.length}`)
  if (typeof req.at === 'number' && model.kind === 'discrete') throw new AnalysisInputError('a discrete sheet is linearised at an operating point only (use steady)')
  const warnings: string[] = []
  let nominal: Point
  try {
    nominal = pointFor(model, req.p, req.u, req.at, undefined, 9)
  } catch (e) {
    if (e instanceof SimulationError) throw new AnalysisInputError(`the simulation to t = ${req.at} failed: ${e.message}`)
    throw e
  }
  const { lin, poles } = nominal
  const { nx: n, nu: m, ny: p } = lin
  if (nominal.op) warnings.push(...nominal.op.messages)
  if (lin.delays.length) warnings.push(`input delays (${lin.delays.map((d) => `${model.inputs[d.input].name}: ${d.tau} ${lin.timeUnit}`).join(', ')}) are not part of A, B, C, D: B and D add the delayed channels (exact at steady state); the frequency response applies e^(-jωτ); the step responses ignore the delays`)
  if (req.at !== 'steady') warnings.push(`linearised at t = ${req.at} of a simulation, not at an operating point: the drift f(x, u) is not zero there and the step responses start from this point as if it were steady`)
  const pinfo = poleInfo(poles, lin.kind, lin.sampleTime)
  const G = dcGain(lin.A, lin.B, lin.C, lin.D, n, m, p, lin.kind)
  if (!G && p * m > 0) warnings.push('no DC gain: the model has a pole at ' + (lin.kind === 'discrete' ? 'z = 1' : 's = 0') + ' (an integrating mode)')
  const zeros = transmissionZeros(lin.A, lin.B, lin.C, lin.D, n, m, p)
  let sysZeros: SystemZeros | null = null
  try {
    sysZeros = systemZeros(lin.A, lin.B, lin.C, lin.D, n, m, p)
  } catch (e) {
    if (!(e instanceof LinearAlgebraError)) throw e
    warnings.push(`the zeros of the whole system could not be computed: ${e.message}`)
  }
  const cr = controllabilityRank(lin.A, lin.B, n, m)
  const or = observabilityRank(lin.A, lin.C, n, p)
  if (n > 0 && m > 0 && cr < n) warnings.push(`not controllable from the inputs: rank ${cr} of ${n}`)
  if (n > 0 && p > 0 && or < n) warnings.push(`not observable from the outputs: rank ${or} of ${n}`)

  // frequency and step responses
  const nw = req.frequencies ?? 200
  const omega = nw > 0 && m * p > 0 ? defaultFrequencies(lin, poles, nw) : null
  const fr = omega ? frequencyResponse(lin, omega) : null

  // uncertainty
  const cov = req.covariance && req.covariance.index.length ? req.covariance : null
  let sdPoles: Float64Array | null = null
  let sdGain: Float64Array | null = null
  let sdFr: Float64Array | null = null
  if (cov) {
    const nq = 2 * n + p * m
    const q = (pp: Float64Array): Float64Array => {
      const pt = pointFor(model, pp, req.u, req.at, nominal.xInternal, 1)
      const out = new Float64Array(nq)
      out.set(matchPoles(poles, pt.poles))
      const g = dcGain(pt.lin.A, pt.lin.B, pt.lin.C, pt.lin.D, n, m, p, lin.kind)
      for (let k = 0; k < p * m; k++) out[2 * n + k] = g ? g[k] : NaN
      return out
    }
    const sd = propagate(q, req.p, cov)
    sdPoles = sd.subarray(0, 2 * n)
    sdGain = sd.subarray(2 * n)
    if (fr && omega) {
      const nch = fr.channels.length
      const qf = (pp: Float64Array): Float64Array => {
        const pt = pointFor(model, pp, req.u, req.at, nominal.xInternal, 1)
        const f2 = frequencyResponse(pt.lin, omega)
        const out = new Float64Array(2 * nch * omega.length)
        f2.channels.forEach((c, k) => {
          out.set(c.magnitudeDb, 2 * k * omega.length)
          // keep the same branch of the phase as the nominal response
          const nomPh = fr.channels[k].phaseDeg
          for (let w = 0; w < omega.length; w++) out[(2 * k + 1) * omega.length + w] = c.phaseDeg[w] + 360 * Math.round((nomPh[w] - c.phaseDeg[w]) / 360)
        })
        return out
      }
      sdFr = propagate(qf, req.p, cov)
    }
  }

  let stepResponses: LinearAnalysis['stepResponses'] = null
  if ((req.steps ?? true) && m > 0 && p > 0 && model.kind === 'continuous') {
    const slow = pinfo.reduce((acc, r) => (r.stable && r.timeConstant !== null ? Math.max(acc, r.timeConstant) : acc), 0)
    const tEnd = slow > 0 ? 5 * slow : 10
    const npts = 200
    const h = tEnd / npts
    stepResponses = model.inputs.map((inp, j) => {
      const u0 = lin.u[j]
      const size = u0 !== 0 ? 0.05 * Math.abs(u0) : 1
      const ls = linearStep(lin, j, size, h, npts)
      let nonlinear: (number | null)[][] | null = null
      try {
        const uStep = Float64Array.from(req.u)
        uStep[j] = req.u[j] + size * model.inputs[j].scale
        const stepped: CompiledModel = { ...model, inputs: model.inputs.map((s, i) => ({ ...s, value: uStep[i] })) }
        const x0 = Float64Array.from(nominal.xInternal)
        const states = model.states.map((s) => ({ ...s, steady: false }))
        const res = simulate({ ...stepped, states }, { tOut: ls.t, p: req.p, x0, rtol: 1e-8, t0: 0 })
        nonlinear = model.outputs.map((o, i) => Array.from({ length: ls.t.length }, (_, k) => fin(toDeclared(o, res.y[k * p + i]))))
      } catch (e) {
        warnings.push(`nonlinear step of '${inp.name}' failed: ${e instanceof Error ? e.message : String(e)}`)
      }
      return {
        input: inp.name,
        size,
        t: Array.from(ls.t),
        linear: model.outputs.map((_, i) => Array.from({ length: ls.t.length }, (_, k) => fin(ls.y[k * p + i]))),
        nonlinear,
      }
    })
  }

  const names = (xs: { name: string }[]) => xs.map((x) => x.name)
  return {
    title: model.title,
    kind: lin.kind,
    sampleTime: lin.sampleTime,
    states: names(model.states),
    inputs: names(model.inputs),
    outputs: names(model.outputs),
    units: { time: lin.timeUnit, states: model.states.map((s) => s.unit), inputs: model.inputs.map((s) => s.unit), outputs: model.outputs.map((s) => s.unit) },
    at: nominal.op
      ? { kind: 'steady', operatingPoint: { status: nominal.op.status, starts: nominal.op.starts, messages: nominal.op.messages, solutions: nominal.op.solutions.map((s) => ({ x: model.states.map((st, i) => toDeclared(st, s.x[i])), stable: s.stable, residual: s.residual, method: s.method })) } }
      : { kind: 'time', t: req.at as number },
    x: Array.from(lin.x),
    u: Array.from(lin.u),
    y: Array.from(lin.y),
    drift: Array.from(lin.drift),
    parameters: model.params.map((q, i) => ({ name: q.name, unit: q.unit, value: toDeclared(q, req.p[i]) })),
    provenance: req.provenance,
    A: toRows(lin.A, n, n),
    B: toRows(lin.B, n, m),
    C: toRows(lin.C, p, n),
    D: toRows(lin.D, p, m),
    poles: pinfo.map((r, k) => ({ ...r, sdRe: sdPoles ? fin(sdPoles[2 * k]) : null, sdIm: sdPoles ? fin(sdPoles[2 * k + 1]) : null })),
    zeros: zeros.map((z) => ({
      input: model.inputs[z.input].name,
      output: model.outputs[z.output].name,
      relativeDegree: z.relativeDegree,
      zeros: z.zeros ? Array.from(z.zeros.re, (re, k) => ({ re, im: z.zeros!.im[k] })) : null,
    })),
    systemZeros: sysZeros ? {
      zeros: Array.from(sysZeros.zeros.re, (re, k) => ({ re, im: sysZeros!.zeros.im[k] })),
      normalRank: sysZeros.normalRank,
      rows: sysZeros.rows,
      columns: sysZeros.columns,
      tolerance: ZERO_RANK_TOL,
    } : null,
    dcGain: G ? toRows(G, p, m).map(finArr) : null,
    dcGainSd: G && sdGain ? toRows(Float64Array.from(sdGain), p, m).map(finArr) : null,
    controllability: { rank: cr, n, tolerance: RANK_TOL },
    observability: { rank: or, n, tolerance: RANK_TOL },
    delays: lin.delays.map((d) => ({ input: model.inputs[d.input].name, tau: d.tau })),
    uncertainty: cov ? { parameters: cov.names, method: 'first-order propagation of the fit covariance (central differences)' } : null,
    frequencyResponse: fr ? {
      omega: Array.from(fr.omega),
      channels: fr.channels.map((c, k) => ({
        input: model.inputs[c.input].name,
        output: model.outputs[c.output].name,
        magnitude: finArr(c.magnitude),
        magnitudeDb: finArr(c.magnitudeDb),
        phaseDeg: finArr(c.phaseDeg),
        magnitudeDbSd: sdFr ? finArr(sdFr.subarray(2 * k * fr.omega.length, (2 * k + 1) * fr.omega.length)) : null,
        phaseDegSd: sdFr ? finArr(sdFr.subarray((2 * k + 1) * fr.omega.length, (2 * k + 2) * fr.omega.length)) : null,
      })),
    } : null,
    stepResponses,
    warnings,
    cautions: [RESULT_CAUTION],
  }
}
