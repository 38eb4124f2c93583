/**
 * Spreading a multiple-shooting evaluation's segments over helper lanes (evaluator.ts), here lanes in
 * this thread: the merged residual, Jacobian and defects are bitwise those of one thread, the whole fit
 * is identical, and the live segment lines read back from the residual match the segments' own
 * simulations. Seeded synthetic data (fixtures/fit/shooting.ts).
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate } from '../../shared/engine/simulate'
import { InThreadEvaluator, MultipleShootingProblem, runFit, type SegmentSetup } from '../../shared/engine/fit'
import { makeProblem } from '../../shared/engine/fit/driver'
import { splitSegments } from '../../shared/engine/fit/multiple-shooting/evaluator'
import { segmentLinesAt } from '../../shared/engine/fit/multiple-shooting/live-lines'
import { LV_SHEET, lotkaVolterraSpec } from '../../fixtures/fit/shooting'

const model = compileModel(LV_SHEET)
const spec = lotkaVolterraSpec()
const setup: SegmentSetup = { sheet: LV_SHEET, spec, options: {}, segments: { segments: 7 } }

function problem(): MultipleShootingProblem {
  return new MultipleShootingProblem(makeProblem(model, spec, simulate, {}), { segments: 7 }, spec.bounds)
}

describe('segment evaluator', () => {
  it('splits segments into contiguous blocks covering each segment once', () => {
    const ms = problem()
    for (const lanes of [1, 2, 3, 7, 9]) {
      const blocks = splitSegments(ms, lanes)
      expect(blocks).toHaveLength(lanes)
      expect(blocks.flatMap((b) => Array.from(b))).toEqual(Array.from({ length: 7 }, (_, i) => i))
    }
    // two lanes over 7 equal segments: 4 and 3 (sample counts as even as whole segments allow)
    expect(splitSegments(ms, 2).map((b) => b.length).sort()).toEqual([3, 4])
  })

  it('one evaluation with 1 and 2 helper lanes (2 and 3 blocks) gives bitwise the same residual, Jacobian and defects', async () => {
    const alone = problem()
    const w = alone.initialNodes([0.9, 0.11, 1.4, 0.8])
    for (let q = alone.nTheta; q < alone.n; q++) w[q] *= 1.05 // off continuity, so the defects are not zero
    alone.mu = 3.5
    alone.lambda.forEach((_, d) => (alone.lambda[d] = 0.01 * (d + 1)))
    const r1 = new Float64Array(alone.m)
    const j1 = new Float64Array(alone.m * alone.n)
    expect(alone.evaluate(w, r1, j1)).toBe(true)
    for (const lanes of [1, 2]) {
      const ms = problem()
      ms.initialNodes([0.9, 0.11, 1.4, 0.8])
      ms.mu = alone.mu
      ms.lambda.set(alone.lambda)
      ms.evaluator = new InThreadEvaluator(model, setup, lanes)
      const r = new Float64Array(ms.m).fill(NaN)
      const j = new Float64Array(ms.m * ms.n).fill(NaN)
      expect(await ms.evaluateAsync(w, r, j)).toBe(true)
      expect(Array.from(r)).toEqual(Array.from(r1))
      expect(Array.from(j)).toEqual(Array.from(j1))
      expect(Array.from(ms.defects)).toEqual(Array.from(alone.defects))
      expect(ms.simulations).toBe(alone.simulations) // the helpers' simulations are counted with this thread's
    }
  })

  it('a whole fit with helper lanes is identical to the fit in one thread', async () => {
    const one = await runFit(model, spec, { segments: { segments: 7 } })
    const spread = await runFit(model, spec, { segments: { segments: 7 }, segmentEvaluator: () => new InThreadEvaluator(model, setup, 2) })
    expect(spread.sse).toBe(one.sse)
    expect(spread.parameters.map((p) => p.value)).toEqual(one.parameters.map((p) => p.value))
    expect(spread.multipleShooting!.simulations).toBe(one.multipleShooting!.simulations)
    expect(spread.multipleShooting!.defect).toBe(one.multipleShooting!.defect)
  }, 120_000)

  it('live lines: measured values and each segment\'s simulated output at the iterate', () => {
    const ms = problem()
    const w = ms.initialNodes([1, 0.1, 1.5, 0.75])
    const r = new Float64Array(ms.m)
    expect(ms.evaluate(w, r, null)).toBe(true)
    const lines = segmentLinesAt(ms, r)
    expect(lines.map((l) => l.output)).toEqual(['prey', 'predator'])
    const prey = lines[0]
    expect(prey.segments).toHaveLength(7)
    expect(prey.t).toHaveLength(60)
    expect(prey.measured[0]).toBeCloseTo(spec.experiments[0].outputs.prey[0], 12)
    // the first segment starts from the sheet's state: its line is that simulation at the sample times
    const p = Float64Array.from([1, 0.1, 1.5, 0.75])
    const first = prey.segments[0]
    const sim = simulate(model, { tOut: Float64Array.from(first.t), p, rtol: 1e-8, atol: 1e-10 })
    first.y.forEach((v, k) => expect(v).toBeCloseTo(sim.y[2 * k], 4))
    // thinning keeps each segment's ends
    const thin = segmentLinesAt(ms, r, 10)[0]
    expect(thin.t.length).toBeLessThan(30)
    expect(thin.segments.every((s) => s.t.length >= 2)).toBe(true)
  })
})
