/**
 * Fit results that never overstate: outcome words, undetermined parameters, kept failure causes,
 * correlation as information, validation initial states. All data are seeded synthetic (invented
 * Tinmoor Works traces generated here).
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { toInternal } from '../../shared/sheet/compiled'
import { simulate } from '../../shared/engine/simulate'
import { runFit, type ProblemSpec } from '../../shared/engine/fit'
import { fitResult } from '../../shared/api/fit'
import { productText, sumText } from '../../shared/engine/stats/identifiability'
import { gaussian } from '../../fixtures/fit/synthetic'
import { MISRA1A, nistSheet } from '../../fixtures/fit/nist'

const PRODUCT_SHEET = `model "Decay with a product of two rates (synthetic)"
time [s]
param a = 0.3 [1/s] in [0.01, 10] "rate factor"
param b = 2 [1] in [0.01, 10] "gain factor"
state x = 1 [1]
dx/dt = -a * b * x
output y = x [1] sigma 0.01
`

const MONOD_SHEET = `model "Monod growth in a batch vessel (synthetic)"
time [h]
param mu_max = 0.4 [1/h] in [0.01, 2] "maximum specific growth rate"
param K_s = 1.5 [g/L] in [0.01, 20] "half-saturation constant"
param Y_xs = 0.5 [1] in [0.05, 1] fixed "yield"
state X = 0.2 [g/L] "biomass"
state S = 10 [g/L] "substrate"
let mu = mu_max * max(S, 0) / (K_s + max(S, 0))
dX/dt = mu * X
dS/dt = -mu * X / Y_xs
output biomass = X [g/L] sigma 0.02
output substrate = S [g/L] sigma 0.05
`

function synthetic(sheet: string, truth: Record<string, number>, t: Float64Array, seed: number, sigma: Record<string, number>) {
  const model = compileModel(sheet)
  const p = Float64Array.from(model.params.map((q) => (q.name in truth ? toInternal(q, truth[q.name]) : q.value)))
  const sim = simulate(model, { tOut: t, inputs: [], p, rtol: 1e-10 })
  const g = gaussian(seed)
  const outputs: Record<string, Float64Array> = {}
  model.outputs.forEach((o, j) => {
    outputs[o.name] = Float64Array.from(t, (_, i) => sim.y[i * model.ny + j] + sigma[o.name] * g())
  })
  return { model, outputs }
}

const tDecay = Float64Array.from({ length: 60 }, (_, i) => i * 0.1)

describe('outcome words', () => {
  const p = MISRA1A
  const model = compileModel(nistSheet(p, p.starts[0]))
  const spec: ProblemSpec = { experiments: [{ name: 'm', time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }

  it('Levenberg–Marquardt with a tiny iteration limit says so; a full run names its convergence test', async () => {
    const cut = await runFit(model, spec, { maxIterations: 2 })
    expect(cut.status).toBe('iteration-limit')
    expect(cut.convergedBy).toBeNull()
    expect(cut.reason).toMatch(/iteration limit \(2\)/)
    expect(cut.starts[0].status).toBe('iteration-limit')
    const full = await runFit(model, spec)
    expect(full.status).toBe('converged')
    expect(['gradient', 'step', 'cost-change']).toContain(full.convergedBy)
    expect(fitResult.parse(JSON.parse(JSON.stringify(full))).convergedBy).toBe(full.convergedBy)
  })

  it('Nelder–Mead with a tiny iteration limit is not reported converged', async () => {
    const cut = await runFit(model, spec, { method: 'nelder-mead', maxIterations: 5 })
    expect(cut.status).toBe('iteration-limit')
    expect(cut.convergedBy).toBeNull()
    const full = await runFit(model, spec, { method: 'nelder-mead', maxIterations: 4000 })
    expect(full.status).toBe('converged')
    expect(full.convergedBy).toBe('cost-change')
  })
})

describe('unidentifiable parameters', () => {
  it("dx/dt = -a·b·x: a and b get no standard error or interval, a·b is named, profiles shown where asked", async () => {
    const { model, outputs } = synthetic(PRODUCT_SHEET, { a: 0.5, b: 1 }, tDecay, 7, { y: 0.01 })
    const res = await runFit(model, { experiments: [{ name: 'decay', time: tDecay, outputs, inputs: {} }] }, { profile: ['a'] })
    expect(fitResult.safeParse(JSON.parse(JSON.stringify(res))).success).toBe(true)
    for (const row of res.parameters) {
      expect(row.determined).toBe(false)
      expect(row.stdError).toBeNull()
      expect(row.ci95).toEqual([null, null])
    }
    // the product is what the data fix: a·b ≈ 0.5 within a few per cent
    expect(res.parameters[0].value * res.parameters[1].value).toBeCloseTo(0.5, 1)
    expect(res.identifiability?.undetermined).toEqual(['a', 'b'])
    expect(res.identifiability?.combinations).toContain('a·b is determined; a and b separately are not')
    expect(res.identifiability?.advice).toMatch(/fix one/)
    expect(res.warnings.some((w) => w.includes('not determined by these data'))).toBe(true)
    expect(res.correlation.matrix[0][1]).toBeNull()
    // the profile of a is flat from a·b/b_max = 0.5/10 up to a's upper bound: b absorbs any such a
    const a = res.parameters[0]
    expect(a.profileCi95![0]).toBeCloseTo(0.05, 2)
    expect(a.profileCi95![1]).toBe(10)
    expect(res.warnings.some((w) => w.includes("profile of 'a'") && w.includes('upper bound'))).toBe(true)
    // the server's looser integration tolerance: the cutoff follows it, the verdict holds
    const loose = await runFit(model, { experiments: [{ name: 'decay', time: tDecay, outputs, inputs: {} }] }, { rtol: 1e-6 })
    expect(loose.identifiability?.cutoff).toBeCloseTo(1e-5, 12)
    expect(loose.identifiability?.undetermined).toEqual(['a', 'b'])
  })

  it('names products, ratios and sums of the singular directions', () => {
    expect(productText([0.7071, 0.7071], ['a', 'b'])).toBe('a·b')
    expect(productText([0.7071, -0.7071], ['a', 'b'])).toBe('a/b')
    expect(productText([0.4472, 0.8944], ['a', 'b'])).toBe('√a·b')
    expect(sumText([1, -2], ['c', 'd'])).toBe('−0.5·c + d')
  })
})

describe('failure causes', () => {
  it("a start that cannot be simulated keeps the engine's message and says which start", async () => {
    const sheet = `model "Draining tank without a floor (synthetic)"
time [s]
param k = 1 [1/s] in [0.5, 5]
state h = 1 [1]
dh/dt = -k * sqrt(h)
output level = h [1]
`
    const model = compileModel(sheet)
    const t = Float64Array.from({ length: 30 }, (_, i) => i * 0.2)
    const res = await runFit(model, { experiments: [{ name: 'e', time: t, outputs: { level: Float64Array.from(t, () => 0.5) }, inputs: {} }] })
    expect(res.status).toBe('failed')
    expect(res.reason).toMatch(/cannot be evaluated at the starting point: .*(NaN|step size too small|step limit).* at t = /)
    expect(res.reasonStart).toBe(1)
    const multi = await runFit(model, { experiments: [{ name: 'e', time: t, outputs: { level: Float64Array.from(t, () => 0.5) }, inputs: {} }] }, { starts: 2 })
    expect(multi.reason).toMatch(/^all 3 starts failed; start 1: the model cannot be evaluated at the starting point: .* at t = /)
    expect(multi.starts.every((s) => / at t = /.test(s.reason))).toBe(true)
  })
})

describe('correlation is information, identifiability comes from the singular values', () => {
  it('a well-determined Monod fit gives no identifiability warning (seeded synthetic data)', async () => {
    const t = Float64Array.from({ length: 41 }, (_, i) => i * 0.25)
    const truth = { mu_max: 0.5, K_s: 2 }
    for (const seed of [1, 2, 3]) {
      const { model, outputs } = synthetic(MONOD_SHEET, truth, t, seed, { biomass: 0.02, substrate: 0.05 })
      const res = await runFit(model, { experiments: [{ name: `batch ${seed}`, time: t, outputs, inputs: {} }] })
      expect(res.status).toBe('converged')
      expect(res.warnings.filter((w) => w.includes('identifiability'))).toEqual([])
      expect(res.identifiability?.rank).toBe(2)
      const ks = res.parameters.find((r) => r.name === 'K_s')!
      expect(ks.determined).toBe(true)
      expect(ks.stdError).not.toBeNull()
      expect(Math.abs(ks.value - truth.K_s)).toBeLessThan(4 * ks.stdError!)
      const r = res.correlation.matrix[0][1]!
      // a strong correlation, if present, is an information line carrying r
      if (Math.abs(r) > 0.99) expect(res.notes.some((n) => n.includes(`r = ${r.toFixed(4)}`))).toBe(true)
      else expect(res.notes.some((n) => n.includes('strongly correlated'))).toBe(false)
    }
  })
})

describe('validation initial states', () => {
  it('estimates only the validation record’s initial state with the parameters frozen, and says so', async () => {
    const sheet = `model "First-order decay with an estimated start (synthetic)"
time [s]
param k = 0.3 [1/s] in [0.01, 5]
state x = 1 [1] estimate in [0, 10]
dx/dt = -k * x
output y = x [1] sigma 0.01
`
    const fitData = synthetic(sheet, { k: 0.8 }, tDecay, 3, { y: 0.01 })
    // the validation record starts at x = 4, not at the sheet's 1
    const model = fitData.model
    const p = Float64Array.from([0.8])
    const sim = simulate(model, { tOut: tDecay, inputs: [], p, x0: Float64Array.from([4]), rtol: 1e-10 })
    const g = gaussian(99)
    const val = { name: 'fresh record', time: tDecay, outputs: { y: Float64Array.from(tDecay, (_, i) => sim.y[i] + 0.01 * g()) }, inputs: {} }
    const spec: ProblemSpec = { experiments: [{ name: 'fit', time: tDecay, outputs: fitData.outputs, inputs: {} }], validation: [val] }
    const plain = await runFit(model, spec)
    expect(plain.validationStart).toBe('sheet')
    expect(plain.validationInitialStates).toEqual([])
    const est = await runFit(model, { ...spec, validationStart: 'estimate' })
    expect(est.validationStart).toBe('estimated')
    expect(est.validationInitialStates).toHaveLength(1)
    expect(est.validationInitialStates[0]).toMatchObject({ experiment: 'fresh record', name: 'x' })
    expect(est.validationInitialStates[0].value).toBeCloseTo(4, 1)
    // parameters frozen: the estimate of k is the same either way
    expect(est.parameters[0].value).toBe(plain.parameters[0].value)
    const vPlain = plain.outputs.find((o) => o.validation)!
    const vEst = est.outputs.find((o) => o.validation)!
    expect(vEst.nrmse!).toBeLessThan(0.05)
    expect(vPlain.nrmse!).toBeGreaterThan(0.3)
  })
})
