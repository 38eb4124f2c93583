/**
 * The band of the simulated output from the parameter covariance, checked on the straight line, where the
 * first-order propagation is exact: for y = a + b·t fitted by least squares to n points the confidence
 * band of the mean response is ŷ(t) ± t_{0.975,n−2}·s·√(1/n + (t − t̄)²/S_tt)
 * (N. R. Draper & H. Smith, Applied Regression Analysis, 3rd ed., 1998, Sec. 3.1; from memory).
 * The data are invented for the check.
 */
import { describe, expect, it } from 'vitest'
import { covarianceFrom, outputBandHalfWidth } from '../../shared/engine/stats/output-band'
import { linearisedCovariance } from '../../shared/engine/stats/covariance'

describe('output band', () => {
  const t = [0, 1, 2, 3, 4, 5, 6, 7]
  const y = [1.1, 2.9, 5.2, 6.8, 9.1, 11.2, 12.8, 15.1]
  const n = t.length
  // column-major Jacobian of the residuals: ∂ŷ/∂a = 1, ∂ŷ/∂b = t
  const jac = new Float64Array(2 * n)
  for (let i = 0; i < n; i++) { jac[i] = 1; jac[n + i] = t[i] }
  const tm = t.reduce((s, v) => s + v, 0) / n
  const stt = t.reduce((s, v) => s + (v - tm) ** 2, 0)
  const b = t.reduce((s, v, i) => s + (v - tm) * y[i], 0) / stt
  const a = y.reduce((s, v) => s + v, 0) / n - b * tm
  const sse = y.reduce((s, v, i) => s + (v - a - b * t[i]) ** 2, 0)
  const cov = linearisedCovariance(jac, n, 2, sse, 2)

  it('equals the textbook confidence band of a fitted line', () => {
    const full = covarianceFrom(cov.stdError, [[1, cov.correlation[1]], [cov.correlation[2], 1]])!
    const at = [0, 2.5, 7, 10]
    // one output, sensitivities dy[(k·ny + j)·ns + c] with ns = 2
    const dy = Float64Array.from(at.flatMap((x) => [1, x]))
    const half = outputBandHalfWidth(dy, at.length, 2, [0, 1], full, 2, cov.tQuantile)
    const s = Math.sqrt(sse / (n - 2))
    at.forEach((x, k) => {
      const textbook = cov.tQuantile * s * Math.sqrt(1 / n + (x - tm) ** 2 / stt)
      expect(half[k]).toBeCloseTo(textbook, 10)
    })
    // narrowest at the mean of t (common practice, no source)
    expect(half[1]).toBeLessThan(half[0])
    expect(half[3]).toBeGreaterThan(half[2])
  })

  it('leaves out a quantity held at a bound and refuses a missing correlation', () => {
    const partial = covarianceFrom([cov.stdError[0], 0], [[1, null], [null, 1]])!
    const half = outputBandHalfWidth(Float64Array.from([1, 4]), 1, 2, [0, 1], partial, 2, 2)
    expect(half[0]).toBeCloseTo(2 * cov.stdError[0], 12)
    expect(covarianceFrom([1, 2], [[1, null], [null, 1]])).toBeNull()
  })
})
