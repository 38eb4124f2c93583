/** Fit problem behaviour on seeded synthetic data (invented Tinmoor Works traces, generated here). */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate } from '../../shared/engine/simulate'
import { runFit, planStarts, fitFromStart, pickBest, FitInputError, type ProblemSpec } from '../../shared/engine/fit'
import { fitResult } from '../../shared/api/fit'
import { TANK_SHEET, gaussian, DISCRETE_SHEET, discreteData } from '../../fixtures/fit/synthetic'
import { MISRA1A, BOXBOD, nistSheet, sameDigits } from '../../fixtures/fit/nist'

const tank = compileModel(TANK_SHEET)

/** level and pressure of the tank for a stepped feed, with noise σ_level [m] and σ_pressure [Pa] */
function tankData(seed: number, k: number, n = 400, sLevel = 0.004, sPressure = 60) {
  const t = Float64Array.from({ length: n }, (_, i) => i * 5)
  const qv = Float64Array.from(t, (ti) => (Math.floor(ti / 400) % 2 === 0 ? 0.004 : 0.001))
  const p = Float64Array.from(tank.params.map((x) => x.value))
  p[tank.params.findIndex((x) => x.name === 'k')] = k
  const sim = simulate(tank, { tOut: t, inputs: [{ t, v: qv }], p, rtol: 1e-10 })
  const g = gaussian(seed)
  const level = new Float64Array(n)
  const pressure = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    level[i] = sim.y[i * 2] + sLevel * g()
    pressure[i] = sim.y[i * 2 + 1] + sPressure * g()
  }
  return { t, qv, level, pressure }
}

function tankExperiment(name: string, seed: number, k = 0.01, outputs: ('level' | 'pressure')[] = ['level']) {
  const d = tankData(seed, k)
  const o: Record<string, Float64Array> = {}
  for (const w of outputs) o[w] = d[w]
  return { name, time: d.t, outputs: o, inputs: { q: { t: d.t, v: d.qv } } }
}

describe('fit problem', () => {
  it('an optimum outside the bounds stops on the bound and flags it', async () => {
    const res = await runFit(tank, { experiments: [tankExperiment('e1', 1, 0.01)], bounds: { k: [0.02, 0.5] }, set: { k: 0.1 } })
    const k = res.parameters[0]
    expect(k.value).toBeCloseTo(0.02, 12)
    expect(k.atBound).toBe('lower')
    expect(k.stdError).toBeNull()
    expect(k.ci95).toEqual([null, null])
    expect(res.warnings.some((w) => w.includes("'k'") && w.includes('lower bound'))).toBe(true)
    expect(res.status).toBe('converged')
  })

  it('one dataset given twice as two experiments gives the same estimates and twice the SSE', async () => {
    const e = tankExperiment('e1', 2)
    const one = await runFit(tank, { experiments: [e] })
    const two = await runFit(tank, { experiments: [e, { ...e, name: 'e1 again' }] })
    expect(two.parameters[0].value).toBeCloseTo(one.parameters[0].value, 7)
    expect(two.sse! / one.sse!).toBeCloseTo(2, 6)
    expect(Math.abs(one.parameters[0].value - 0.01)).toBeLessThan(4 * one.parameters[0].stdError!)
  })

  it('a local parameter gets one estimate per experiment', async () => {
    const res = await runFit(tank, {
      experiments: [tankExperiment('slow', 3, 0.006), tankExperiment('fast', 4, 0.015)], local: ['k'],
    })
    const ks = res.parameters.filter((p) => p.name === 'k')
    expect(ks.map((p) => p.experiment)).toEqual([0, 1])
    expect(Math.abs(ks[0].value - 0.006)).toBeLessThan(4 * ks[0].stdError!)
    expect(Math.abs(ks[1].value - 0.015)).toBeLessThan(4 * ks[1].stdError!)
    expect(res.correlation.names).toEqual(['k[slow]', 'k[fast]'])
  })

  it('validation metrics use only the validation data and never enter the fit', async () => {
    const fit = tankExperiment('fit', 5)
    const val = tankExperiment('val', 6)
    const bad = { ...val, name: 'bad', outputs: { level: val.outputs.level.map((v) => v + 0.5) } }
    const a = await runFit(tank, { experiments: [fit], validation: [val] })
    const b = await runFit(tank, { experiments: [fit], validation: [bad] })
    expect(b.parameters[0].value).toBe(a.parameters[0].value)
    expect(b.sse).toBe(a.sse)
    const va = a.outputs.find((o) => o.validation)!
    const vb = b.outputs.find((o) => o.validation)!
    expect(va.experimentName).toBe('val')
    expect(va.n).toBe(400)
    expect(va.nrmse!).toBeLessThan(0.2)
    // the 0.5 m offset shows in the validation RMSE only
    expect(vb.rmse!).toBeGreaterThan(0.45)
    expect(a.outputs.find((o) => !o.validation)!.rmse).toBe(b.outputs.find((o) => !o.validation)!.rmse)
  })

  it('ml weighting on two outputs in different units recovers both noise levels', async () => {
    const e = tankExperiment('both', 7, 0.01, ['level', 'pressure'])
    const res = await runFit(tank, { experiments: [e], weighting: 'ml' })
    const lv = res.outputs.find((o) => o.name === 'level')!
    const pr = res.outputs.find((o) => o.name === 'pressure')!
    expect(lv.sigmaEstimate! / 0.004).toBeGreaterThan(0.9)
    expect(lv.sigmaEstimate! / 0.004).toBeLessThan(1.1)
    expect(pr.sigmaEstimate! / 60).toBeGreaterThan(0.9)
    expect(pr.sigmaEstimate! / 60).toBeLessThan(1.1)
    // at the maximum-likelihood fixed point each output's weighted SSE equals its sample count
    expect(res.sse!).toBeCloseTo(800, 3)
    expect(Math.abs(res.parameters[0].value - 0.01)).toBeLessThan(4 * res.parameters[0].stdError!)
  })

  it('normalized and equal weighting: 1/var(y) per output, or 1', async () => {
    const e = tankExperiment('both', 10, 0.01, ['level', 'pressure'])
    const res = await runFit(tank, { experiments: [e], weighting: 'normalized' })
    const lv = res.outputs.find((o) => o.name === 'level')!
    const y = e.outputs.level
    const mean = y.reduce((a, b) => a + b, 0) / y.length
    const v = y.reduce((a, b) => a + (b - mean) ** 2, 0) / (y.length - 1)
    expect(lv.weight!).toBeCloseTo(1 / v, 6)
    const eq = await runFit(tank, { experiments: [e], weighting: 'equal' })
    expect(eq.outputs.map((o) => o.weight)).toEqual([1, 1])
    // equal weights in SI: the pressure (in Pa) dominates the cost
    expect(eq.sse!).toBeGreaterThan(1e5)
  })

  it('a steady initial state follows the parameters (sensitivities through the steady solve)', async () => {
    const sheet = TANK_SHEET.replace('state h = 0.2 [m] "level"', 'state h = 0.2 [m] steady "level"')
    const model = compileModel(sheet)
    const t = Float64Array.from({ length: 200 }, (_, i) => i * 5)
    const qv = Float64Array.from(t, (ti) => (ti < 300 ? 0.002 : 0.004))
    const p = Float64Array.from(model.params.map((x) => x.value))
    p[model.params.findIndex((x) => x.name === 'k')] = 0.008
    const sim = simulate(model, { tOut: t, inputs: [{ t, v: qv }], p, rtol: 1e-10 })
    expect(sim.y[0]).toBeCloseTo(0.002 / 0.008, 8)
    const g = gaussian(12)
    const level = Float64Array.from({ length: 200 }, (_, i) => sim.y[2 * i] + 0.003 * g())
    const res = await runFit(model, { experiments: [{ name: 's', time: t, outputs: { level }, inputs: { q: { t, v: qv } } }] })
    expect(Math.abs(res.parameters[0].value - 0.008)).toBeLessThan(4 * res.parameters[0].stdError!)
    expect(res.parameters[0].stdError! / 0.008).toBeLessThan(0.02)
  })

  it('estimates an initial state per experiment', async () => {
    const sheet = TANK_SHEET.replace('state h = 0.2 [m] "level"', 'state h = 0.5 [m] estimate in [0, 3] "level"')
    const model = compileModel(sheet)
    const res = await runFit(model, { experiments: [tankExperiment('e', 8)] })
    expect(res.initialStates).toHaveLength(1)
    expect(Math.abs(res.initialStates[0].value - 0.2)).toBeLessThan(4 * res.initialStates[0].stdError!)
    expect(res.nEstimated).toBe(2)
    expect(res.dof).toBe(400 - 2)
  })

  it('residual diagnostics: white residuals at the truth, correlated ones for a wrong structure', async () => {
    const res = await runFit(tank, { experiments: [tankExperiment('e', 9)] })
    const o = res.outputs[0]
    expect(o.residuals!.maxLag).toBe(26)
    expect(o.residuals!.band95).toBeCloseTo(1.96 / 20, 12)
    expect(o.residuals!.ljungBox.pValue).toBeGreaterThan(0.001)
    expect(o.residuals!.crossCorrelation[0].input).toBe('q')
    const wrong = await runFit(tank, { experiments: [tankExperiment('e', 9)], set: { A: 3 } })
    expect(wrong.outputs[0].residuals!.ljungBox.pValue).toBeLessThan(1e-6)
    expect(wrong.aic!).toBeGreaterThan(res.aic!)
  })

  it('multistart: Latin-hypercube starts plus the sheet values, all reported, best kept; workers API', async () => {
    const p = BOXBOD
    const model = compileModel(nistSheet(p, p.starts[0]))
    const spec: ProblemSpec = { experiments: [{ name: 'b', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }
    const res = await runFit(model, spec, { starts: 6, seed: 3, rtol: 1e-10 })
    expect(res.starts).toHaveLength(7)
    expect(res.starts[0].start).toEqual(p.starts[0])
    expect(sameDigits(res.sse!, p.certified.rss, 6)).toBe(true)
    const plans = planStarts(model, spec, { starts: 6, seed: 3 })
    expect(plans.map((x) => x.theta)).toEqual(res.starts.map((x) => x.start))
    const outcomes = await Promise.all(plans.map((pl) => fitFromStart(model, spec, pl, { rtol: 1e-10 })))
    expect(pickBest(outcomes).cost).toBeCloseTo(res.sse!, 6)
    let called = 0
    const viaWorkers = await runFit(model, spec, {
      starts: 6, seed: 3, rtol: 1e-10,
      runStarts: async (pl) => { called++; return Promise.all(pl.map((x) => fitFromStart(model, spec, x, { rtol: 1e-10 }))) },
    })
    expect(called).toBe(1)
    expect(viaWorkers.sse).toBeCloseTo(res.sse!, 6)
  })

  it('nelder-mead reaches the BoxBOD optimum within the bounds', async () => {
    const p = BOXBOD
    const model = compileModel(nistSheet(p, p.starts[1]))
    const res = await runFit(model, { experiments: [{ name: 'b', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }, { method: 'nelder-mead', rtol: 1e-10, ftol: 1e-12 })
    expect(res.method).toBe('nelder-mead')
    expect(sameDigits(res.sse!, p.certified.rss, 5)).toBe(true)
    expect(sameDigits(res.parameters[0].value, p.certified.b[0], 3)).toBe(true)
  })

  it('progress callback, abort signal and time budget', async () => {
    const p = MISRA1A
    const model = compileModel(nistSheet(p, p.starts[0]))
    const spec: ProblemSpec = { experiments: [{ name: 'm', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }
    const seen: number[] = []
    const res = await runFit(model, spec, { onProgress: (i) => seen.push(i.cost) })
    expect(seen.length).toBe(res.iterations + 1)
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeLessThan(seen[i - 1])
    const ctl = new AbortController()
    const aborted = await runFit(model, spec, { onProgress: (i) => { if (i.iteration === 2) ctl.abort() }, signal: ctl.signal })
    expect(aborted.status).toBe('aborted')
    const budget = await runFit(model, spec, { timeBudgetMs: 0, starts: 3 })
    expect(budget.status).toBe('time-budget')
    expect(budget.reason).toMatch(/time budget/)
  })

  it('a multi-start fit stopped before any start ended with an estimate: no outcome is an abort, a failed one is its status', async () => {
    // the starts run elsewhere (runStarts, as the job pool does) and the caller stops the fit before any of them
    // finished: the pool answers with no outcome, or only with failed ones
    const p = MISRA1A
    const model = compileModel(nistSheet(p, p.starts[0]))
    const spec: ProblemSpec = { experiments: [{ name: 'm', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }
    const ctl = new AbortController()
    const finished: number[] = []
    const none = runFit(model, spec, { starts: 4, signal: ctl.signal, runStarts: async () => { ctl.abort(); return [] } })
    await expect(none).rejects.toThrow(/stopped before any start had finished/)
    const ctl2 = new AbortController()
    const failedOnly = await runFit(model, spec, {
      starts: 4, signal: ctl2.signal, onStartFinished: (n) => finished.push(n),
      runStarts: async (plans) => {
        ctl2.abort()
        return [{ index: plans[1].index, start: plans[1].theta, theta: plans[1].theta, cost: NaN, objective: NaN, status: 'failed', convergedBy: null, reason: 'the simulation failed', iterations: 0, simulations: 1, costHistory: [], weights: null }]
      },
    })
    expect(failedOnly.status).toBe('failed')
    expect(failedOnly.stoppedEarly).toBeUndefined()
    expect(finished).toEqual([])
    // in this thread: each start that ends with an estimate is counted
    const counted: number[] = []
    await runFit(model, spec, { starts: 2, onStartFinished: (n, planned) => counted.push(n * 10 + planned) })
    expect(counted).toEqual([13, 23, 33])
  })

  it('profile-likelihood interval and cost landscape', async () => {
    const p = MISRA1A
    const model = compileModel(nistSheet(p, p.starts[1]))
    const spec: ProblemSpec = { experiments: [{ name: 'm', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }
    const res = await runFit(model, spec, { rtol: 1e-10, profile: ['b1'], landscape: { x: 'b1', y: 'b2', n: 11 } })
    const b1 = res.parameters[0]
    const [lo, hi] = b1.profileCi95!
    // nearly linear model: the profile interval is close to the linearised one, and contains the estimate
    expect(lo!).toBeLessThan(b1.value)
    expect(hi!).toBeGreaterThan(b1.value)
    expect(Math.abs(lo! - b1.ci95[0]!) / b1.stdError!).toBeLessThan(0.3)
    expect(Math.abs(hi! - b1.ci95[1]!) / b1.stdError!).toBeLessThan(0.3)
    const L = res.landscape!
    expect(L.cost).toHaveLength(11)
    expect(L.cost[0]).toHaveLength(11)
    expect(L.estimate[0]).toBeCloseTo(b1.value, 10)
    const min = Math.min(...L.cost.flat().map((c) => c ?? Infinity))
    expect(min).toBeGreaterThanOrEqual(res.sse! * (1 - 1e-9))
    expect(fitResult.parse(res).landscape).not.toBeNull()
  })

  it('equation-error start for a linear-in-parameter discrete sheet', async () => {
    const model = compileModel(DISCRETE_SHEET)
    const d = discreteData(300, 42)
    const res = await runFit(model, { experiments: [{ name: 'd', time: d.t, outputs: { y: d.y }, inputs: { u: { t: d.t, v: d.u } } }] }, { equationError: 'start' })
    expect(res.starts).toHaveLength(2)
    expect(res.equationError!.parameters.map((x) => x.name)).toEqual(['a', 'b'])
    expect(res.equationError!.sse!).toBeGreaterThan(res.sse!)
    const nonlinear = compileModel(TANK_SHEET)
    const r2 = await runFit(nonlinear, { experiments: [tankExperiment('e', 1)] }, { equationError: 'compare' })
    expect(r2.equationError).toBeNull()
    expect(r2.warnings.some((w) => w.includes('equation-error estimate not available'))).toBe(true)
  })
})

describe('bad fit input: clear errors', () => {
  const e = () => tankExperiment('e', 1)
  const fails = async (spec: ProblemSpec, re: RegExp, kind?: 'argument' | 'data') => {
    let err: unknown
    try { await runFit(tank, spec) } catch (x) { err = x }
    expect(err).toBeInstanceOf(FitInputError)
    expect((err as Error).message).toMatch(re)
    if (kind) expect((err as FitInputError).kind).toBe(kind)
  }
  it('fewer samples than estimated quantities', async () => {
    const d = e()
    const short = { ...d, time: d.time.slice(0, 3), outputs: { level: Float64Array.from([0.2, NaN, NaN]) } }
    const sheet = compileModel(TANK_SHEET.replace('state h = 0.2 [m] "level"', 'state h = 0.5 [m] estimate in [0, 3] "level"'))
    await expect(runFit(sheet, { experiments: [short] })).rejects.toThrow(/fewer samples \(1 measured values\) than estimated quantities \(2/)
  })
  it('bounds with lower ≥ upper', () => fails({ experiments: [e()], bounds: { k: [0.5, 0.1] } }, /--bounds k: the lower bound \(0.5\) must be below the upper bound \(0.1\)/, 'argument'))
  it('a start outside the bounds', () => fails({ experiments: [e()], set: { k: 2 } }, /parameter 'k': the start value 2 m\^2\/s lies outside its bounds \[0.00001, 1\] m\^2\/s/, 'argument'))
  it('freeing a parameter that has no bounds', () => fails({ experiments: [e()], free: ['A'] }, /--free A: 'A' has no bounds/, 'argument'))
  it('an unknown --set name, with a suggestion', () => fails({ experiments: [e()], set: { kk: 1 } }, /--set kk: the sheet has no parameter or state named 'kk' \(did you mean 'k'\?\)/, 'argument'))
  it('no output column', () => fails({ experiments: [{ ...e(), source: 'flows.csv', outputs: {} }] }, /flows.csv: no output column/, 'data'))
  it('an all-NaN output column', () => fails({ experiments: [{ ...e(), source: 'x.csv', outputs: { level: new Float64Array(400).fill(NaN) } }] }, /x.csv, column 'level': output 'level' has no numeric value/))
  it('non-increasing time names the row', () => {
    const d = e()
    const t = Float64Array.from(d.time)
    t[10] = t[9]
    return fails({ experiments: [{ ...d, source: 'y.csv', time: t }] }, /y.csv, row 12, column 'time': duplicate time/)
  })
  it('nothing to estimate', () => fails({ experiments: [e()], fix: ['k'] }, /nothing to estimate/))
  it('the result JSON matches its schema', async () => {
    const res = await runFit(tank, { experiments: [e()] })
    expect(() => fitResult.parse(JSON.parse(JSON.stringify(res)))).not.toThrow()
  })
})
