/**
 * Prediction-error (output-error) estimate vs. ordinary least-squares one-step-ahead estimate for
 * x(k+1) = 0.9·x(k) + 0.5·u(k), u a ±1 PRBS, N = 500, white noise σ = 0.3 on the measured output
 * (seeded synthetic data). Over 20 seeds the output-error estimate of a is unbiased while OLS is biased
 * towards zero: the known errors-in-variables bias for dynamic systems with output noise
 * (common practice, no source).
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { runFit } from '../../shared/engine/fit'
import { DISCRETE_SHEET, discreteData } from '../../fixtures/fit/synthetic'

describe('discrete first-order system: PEM vs OLS over 20 seeds', () => {
  it('the PEM mean of a lies within 3 standard errors of 0.9, the OLS mean more than 3 away', async () => {
    const model = compileModel(DISCRETE_SHEET)
    const pem: number[] = []
    const ols: number[] = []
    for (let seed = 1; seed <= 20; seed++) {
      const d = discreteData(500, seed)
      const res = await runFit(model, {
        experiments: [{ name: `seed ${seed}`, time: d.t, outputs: { y: d.y }, inputs: { u: { t: d.t, v: d.u } } }],
      }, { equationError: 'compare' })
      expect(res.status).toBe('converged')
      pem.push(res.parameters.find((p) => p.name === 'a')!.value)
      ols.push(res.equationError!.parameters.find((p) => p.name === 'a')!.value)
    }
    const stats = (v: number[]) => {
      const mean = v.reduce((s, x) => s + x, 0) / v.length
      const sd = Math.sqrt(v.reduce((s, x) => s + (x - mean) ** 2, 0) / (v.length - 1))
      return { mean, se: sd / Math.sqrt(v.length) }
    }
    const p = stats(pem)
    const o = stats(ols)
    expect(Math.abs(p.mean - 0.9)).toBeLessThan(3 * p.se)
    expect(Math.abs(o.mean - 0.9)).toBeGreaterThan(3 * o.se)
    expect(o.mean).toBeLessThan(0.9)
  })
})
