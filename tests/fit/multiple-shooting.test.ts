/**
 * Multiple shooting on seeded synthetic data (fixtures/fit/shooting.ts says where each case comes
 * from): it reaches the optimum a multi-start single-shooting search finds where single shooting from
 * the same start does not, fits an open-loop unstable plant from its closed-loop record, reports the
 * continuity defect, and keeps bounds.
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate } from '../../shared/engine/simulate'
import { runFit, FitProblem, FitInputError, MultipleShootingProblem, segmentStarts, suggestSegments } from '../../shared/engine/fit'
import { outputStateMap } from '../../shared/engine/fit/multiple-shooting/problem'
import { fitResult } from '../../shared/api/fit'
import { LV_SHEET, LV_TRUTH, lotkaVolterraSpec, UNSTABLE_SHEET, UNSTABLE_TRUTH, unstableSpec } from '../../fixtures/fit/shooting'
import { TANK_SHEET } from '../../fixtures/fit/synthetic'

const lv = compileModel(LV_SHEET)
const plant = compileModel(UNSTABLE_SHEET)
const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b)

describe('multiple shooting', () => {
  it('predator–prey: from the sheet start 30 % off it reaches the optimum of a 30-start single-shooting search', async () => {
    const spec = lotkaVolterraSpec()
    const single = await runFit(lv, spec)
    const search = await runFit(lv, spec, { starts: 29, seed: 3 })
    const shot = await runFit(lv, spec, { segments: { segments: 10 } })
    expect(fitResult.parse(shot).multipleShooting).toBeDefined()
    // single shooting from the sheet values stalls in a local minimum far above the optimum
    expect(single.sse!).toBeGreaterThan(100 * search.sse!)
    // multiple shooting from the same start: the same optimum, cost to 1e-6 relative
    expect(relDiff(shot.sse!, search.sse!)).toBeLessThan(1e-6)
    expect(shot.status).toBe('converged')
    const ms = shot.multipleShooting!
    expect(ms.continuous).toBe(true)
    expect(ms.defect!).toBeLessThanOrEqual(ms.defectTolerance)
    expect(ms.segments).toBe(10)
    expect(ms.experiments[0].boundaries).toHaveLength(9)
    // the estimates lie near the generating values (within 4 standard errors)
    for (const p of shot.parameters) {
      const truth = LV_TRUTH[p.name as keyof typeof LV_TRUTH]
      expect(Math.abs(p.value - truth)).toBeLessThan(4 * p.stdError!)
    }
  }, 120_000)

  it('an open-loop unstable plant fits from its closed-loop record with multiple shooting and fails with single shooting', async () => {
    const spec = unstableSpec()
    const single = await runFit(plant, spec)
    const shot = await runFit(plant, spec, { segments: { segments: 8 } })
    const a = shot.parameters.find((p) => p.name === 'a')!
    const b = shot.parameters.find((p) => p.name === 'b')!
    expect(shot.multipleShooting!.continuous).toBe(true)
    expect(relDiff(a.value, UNSTABLE_TRUTH.a)).toBeLessThan(0.01)
    expect(relDiff(b.value, UNSTABLE_TRUTH.b)).toBeLessThan(0.01)
    // the residuals of a right fit are at the noise level: SSE ≈ N (weights 1/σ², 81 samples)
    expect(shot.sse!).toBeLessThan(2 * 81)
    // single shooting: the simulated record runs away; the fit ends far off with a cost ≫ the noise
    const sa = single.parameters.find((p) => p.name === 'a')!
    expect(single.sse!).toBeGreaterThan(100 * shot.sse!)
    expect(relDiff(sa.value, UNSTABLE_TRUTH.a)).toBeGreaterThan(0.1)
  }, 120_000)

  it('a continuity that the state bounds forbid is reported, and such a fit is not called converged', async () => {
    // the prey starts at 10 and must pass every node inside [20, 30]: no trajectory of the model does
    const spec = { ...lotkaVolterraSpec(), bounds: { x: [20, 30] as [number, number] } }
    const shot = await runFit(lv, spec, { segments: { segments: 10 } })
    const ms = shot.multipleShooting!
    expect(ms.continuous).toBe(false)
    expect(ms.defect!).toBeGreaterThan(ms.defectTolerance)
    expect(shot.status).not.toBe('converged')
    expect(shot.warnings.some((w) => w.startsWith('multiple shooting:') && w.includes('continuity not reached'))).toBe(true)
  }, 120_000)

  it('segment states start from the measured outputs that are states and keep the states\' bounds', () => {
    const spec = { ...lotkaVolterraSpec(), bounds: { x: [0, 12] as [number, number] } }
    const base = new FitProblem(lv, spec, simulate, { rtol: 1e-8, atol: 1e-10 })
    const ms = new MultipleShootingProblem(base, { segments: 4 }, spec.bounds)
    expect(ms.n).toBe(4 + 3 * 2)
    expect(ms.m).toBe(120 + 3 * 2)
    const w = ms.initialNodes(base.start)
    const ex = spec.experiments[0]
    ms.segments.filter((s) => s.sCol >= 0).forEach((s) => {
      expect(w[s.sCol]).toBe(Math.min(12, ex.outputs.prey[s.k0]))
      expect(w[s.sCol + 1]).toBe(ex.outputs.predator[s.k0])
      expect(ms.lower[s.sCol]).toBe(0)
      expect(ms.upper[s.sCol]).toBe(12)
      expect(ms.upper[s.sCol + 1]).toBe(Infinity)
    })
  })

  it('the stacked Jacobian matches central differences of the stacked residual', () => {
    const spec = lotkaVolterraSpec()
    const base = new FitProblem(lv, spec, simulate, { rtol: 1e-11, atol: 1e-12 })
    const ms = new MultipleShootingProblem(base, { segments: 3 })
    const w = ms.initialNodes(base.start)
    ms.mu = 7
    ms.lambda.fill(0.3)
    const r = new Float64Array(ms.m)
    const jac = new Float64Array(ms.m * ms.n)
    expect(ms.evaluate(w, r, jac)).toBe(true)
    const rp = new Float64Array(ms.m)
    const rm = new Float64Array(ms.m)
    for (let j = 0; j < ms.n; j++) {
      const h = 1e-6 * Math.max(1, Math.abs(w[j]))
      const wp = Float64Array.from(w)
      const wm = Float64Array.from(w)
      wp[j] += h
      wm[j] -= h
      ms.evaluate(wp, rp, null)
      ms.evaluate(wm, rm, null)
      for (let i = 0; i < ms.m; i++) {
        const fd = (rp[i] - rm[i]) / (2 * h)
        expect(Math.abs(jac[j * ms.m + i] - fd)).toBeLessThan(1e-4 * (1 + Math.abs(fd)))
      }
    }
  })

  it('cuts records evenly, by length, and refuses too many segments with a clear message', () => {
    const t = Float64Array.from({ length: 60 }, (_, i) => i * 0.25)
    expect(Array.from(segmentStarts(t, { segments: 4 }, 'e'))).toEqual([0, 15, 30, 45])
    expect(segmentStarts(t, { segmentLength: 1.5 }, 'e').length).toBe(10)
    expect(() => segmentStarts(t, { segments: 31 }, 'basin.csv')).toThrow(FitInputError)
    expect(() => segmentStarts(t, { segments: 31 }, 'basin.csv')).toThrow(/basin\.csv: 60 samples allow at most 30 segments/)
    expect(() => segmentStarts(t, { segments: 0 }, 'e')).toThrow(/--segments/)
  })

  it('knows which outputs are states, and suggests a segment count from the model time scale', () => {
    expect(Array.from(outputStateMap(lv))).toEqual([0, 1])
    // the tank's pressure is ρ·g·h, not a state
    expect(Array.from(outputStateMap(compileModel(TANK_SHEET)))).toEqual([0, -1])
    const n = suggestSegments(lv, 15, 60)
    expect(n).toBeGreaterThanOrEqual(4)
    expect(n).toBeLessThanOrEqual(15)
    expect(suggestSegments(lv, 15, 8)).toBe(2)
  })

  it('refuses discrete-time sheets', async () => {
    const disc = compileModel(`model "d (synthetic)"
time [s]
sample 1 [s]
param a = 0.5 [1] in [0, 0.99]
state x = 1 [1]
next x = a * x
output y = x [1]
`)
    const t = Float64Array.from({ length: 10 }, (_, i) => i)
    await expect(runFit(disc, { experiments: [{ name: 'd', time: t, outputs: { y: t.map((k) => 0.6 ** k) }, inputs: {} }] }, { segments: { segments: 2 } }))
      .rejects.toThrow(/continuous-time/)
  })
})
