import { describe, expect, it } from 'vitest'
import { erf } from 'mathjs'
import { studentTQuantile, studentTCdf, chiSquareSurvival, normalQuantile, lnGamma } from '../../shared/engine/stats/distributions'
import { svd } from '../../shared/engine/stats/svd'
import { householderQR, applyQt, extractR } from '../../shared/engine/stats/qr'
import { linearisedCovariance } from '../../shared/engine/stats/covariance'
import { autocorrelation, crossCorrelation, ljungBox, maxLagFor } from '../../shared/engine/stats/residuals'
import { aic, bic, fitMetrics } from '../../shared/engine/stats/metrics'
import { latinHypercube } from '../../shared/engine/fit/lhs'
import { mulberry32 } from '../../shared/engine/random'

describe('Student-t quantiles', () => {
  // NIST/SEMATECH e-Handbook of Statistical Methods, Sec. 1.3.6.7.2 "Critical values of the Student's t
  // distribution", upper 0.025 column (three decimals as printed there).
  const table: [number, number][] = [
    [1, 12.706], [2, 4.303], [3, 3.182], [4, 2.776], [5, 2.571], [10, 2.228], [12, 2.179], [20, 2.086],
    [30, 2.042], [60, 2.0], [100, 1.984],
  ]
  it.each(table)('t(0.975, %i) matches the NIST table', (nu, t) => {
    expect(Math.abs(studentTQuantile(0.975, nu) - t)).toBeLessThanOrEqual(0.0005 + 1e-12)
  })
  it('matches closed forms and limits', () => {
    // ν = 1 is the Cauchy distribution: t = tan(π(p − ½)) (Abramowitz & Stegun 26.7.3)
    expect(studentTQuantile(0.975, 1)).toBeCloseTo(Math.tan(Math.PI * 0.475), 12)
    // ν = 2: t = (2p − 1)/√(2p(1 − p)) (A&S 26.7.3)
    expect(studentTQuantile(0.9, 2)).toBeCloseTo(0.8 / Math.sqrt(0.18), 12)
    // large ν tends to the normal quantile 1.959963984540054 (A&S Table 26.1; value from memory)
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 10)
    // and independently: Φ(z) = (1 + erf(z/√2))/2 with mathjs's erf (a general-purpose library; W. J. Cody's
    // rational Chebyshev approximations, Math. Comp. 23 (1969) 631–637)
    expect(erf(normalQuantile(0.975) / Math.SQRT2)).toBeCloseTo(0.95, 14)
    expect(studentTQuantile(0.975, 1e6)).toBeCloseTo(1.96, 4)
    // the quantile inverts the cdf at odd degrees of freedom
    for (const nu of [3, 7.5, 12, 41]) expect(studentTCdf(studentTQuantile(0.975, nu), nu)).toBeCloseTo(0.975, 12)
    expect(studentTQuantile(0.025, 5)).toBeCloseTo(-studentTQuantile(0.975, 5), 12)
  })
  it('ln Γ matches factorials', () => {
    expect(lnGamma(5)).toBeCloseTo(Math.log(24), 12)
    expect(lnGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12)
  })
})

describe('chi-square upper tail', () => {
  // NIST/SEMATECH e-Handbook Sec. 1.3.6.7.4 "Critical values of the chi-square distribution":
  // upper 5 % points for ν = 1, 5, 10, 20 are 3.841, 11.070, 18.307, 31.410.
  it.each([[1, 3.841], [5, 11.07], [10, 18.307], [20, 31.41]])('P(χ²(%i) > %f) ≈ 0.05', (nu, x) => {
    expect(Math.abs(chiSquareSurvival(x, nu) - 0.05)).toBeLessThan(2e-4)
  })
  it('ν = 2 has the closed form exp(−x/2)', () => {
    expect(chiSquareSurvival(3.3, 2)).toBeCloseTo(Math.exp(-1.65), 13)
  })
})

describe('QR and SVD', () => {
  const rand = mulberry32(7)
  it('one-sided Jacobi SVD reconstructs the matrix with orthonormal factors', () => {
    const m = 6
    const n = 4
    const a = Float64Array.from({ length: m * n }, () => rand() - 0.5)
    const d = svd(a, m, n)
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) {
      let s = 0
      for (let k = 0; k < n; k++) s += d.u[i * n + k] * d.s[k] * d.v[j * n + k]
      expect(s).toBeCloseTo(a[i * n + j], 13)
    }
    for (let k = 1; k < n; k++) expect(d.s[k]).toBeLessThanOrEqual(d.s[k - 1])
    for (let p = 0; p < n; p++) for (let q = 0; q < n; q++) {
      let s = 0
      for (let i = 0; i < n; i++) s += d.v[i * n + p] * d.v[i * n + q]
      expect(s).toBeCloseTo(p === q ? 1 : 0, 13)
    }
  })
  it('Householder QR: Qᵀb and R solve a least-squares problem exactly when consistent', () => {
    const m = 8
    const n = 3
    const a = Float64Array.from({ length: m * n }, () => rand())
    const x = [1.5, -2, 0.25]
    const b = new Float64Array(m)
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) b[i] += a[j * m + i] * x[j]
    const f = Float64Array.from(a)
    const beta = new Float64Array(n)
    householderQR(f, m, n, beta)
    applyQt(f, m, n, beta, b)
    const r = new Float64Array(n * n)
    extractR(f, m, n, r)
    const sol = new Float64Array(n)
    for (let i = n - 1; i >= 0; i--) {
      let s = b[i]
      for (let j = i + 1; j < n; j++) s -= r[i * n + j] * sol[j]
      sol[i] = s / r[i * n + i]
    }
    sol.forEach((v, j) => expect(v).toBeCloseTo(x[j], 12))
    for (let i = n; i < m; i++) expect(Math.abs(b[i])).toBeLessThan(1e-12)
  })
  it('linearised covariance equals s²(JᵀJ)⁻¹ for a straight-line fit (closed form, common practice)', () => {
    const xs = [0, 1, 2, 3, 4, 5]
    const m = xs.length
    const j = new Float64Array(2 * m)
    xs.forEach((x, i) => { j[i] = 1; j[m + i] = x })
    const sse = 2.5
    const c = linearisedCovariance(j, m, 2, sse, 2)
    const sx = xs.reduce((a, b) => a + b, 0)
    const sxx = xs.reduce((a, b) => a + b * b, 0)
    const det = m * sxx - sx * sx
    const s2 = sse / (m - 2)
    expect(c.cov[0]).toBeCloseTo((s2 * sxx) / det, 12)
    expect(c.cov[3]).toBeCloseTo((s2 * m) / det, 12)
    expect(c.cov[1]).toBeCloseTo((-s2 * sx) / det, 12)
    expect(c.rank).toBe(2)
    expect(c.tQuantile).toBeCloseTo(studentTQuantile(0.975, 4), 12)
  })
  it('a rank-deficient Jacobian names the parameters that cannot be separated', () => {
    const m = 5
    const j = new Float64Array(3 * m)
    for (let i = 0; i < m; i++) { j[i] = 1; j[m + i] = 2; j[2 * m + i] = i }
    const c = linearisedCovariance(j, m, 3, 1, 3)
    expect(c.rank).toBe(2)
    expect(c.weakDirection).toEqual([0, 1])
  })
})

describe('residual tests', () => {
  it('lag rule grows with N', () => {
    expect(maxLagFor(100)).toBe(20)
    expect(maxLagFor(1000)).toBe(30)
    expect(maxLagFor(5)).toBe(4)
  })
  it('white noise passes, an AR(1) sequence fails the Ljung–Box test (seeded synthetic data)', () => {
    const rand = mulberry32(11)
    const gauss = () => Math.sqrt(-2 * Math.log(rand() + 1e-300)) * Math.cos(2 * Math.PI * rand())
    const n = 2000
    const white = Float64Array.from({ length: n }, gauss)
    const ar = new Float64Array(n)
    for (let i = 1; i < n; i++) ar[i] = 0.6 * ar[i - 1] + white[i]
    const L = maxLagFor(n)
    expect(ljungBox(autocorrelation(white, L), n).pValue).toBeGreaterThan(0.01)
    const rAr = autocorrelation(ar, L)
    expect(rAr[0]).toBeCloseTo(0.6, 1)
    expect(ljungBox(rAr, n).pValue).toBeLessThan(1e-10)
  })
  it('Ljung–Box statistic follows its definition (Ljung & Box 1978, eq. 2.1)', () => {
    const r = [0.5, -0.2, 0.1]
    const n = 50
    const q = n * (n + 2) * (0.25 / 49 + 0.04 / 48 + 0.01 / 47)
    const lb = ljungBox(r, n)
    expect(lb.q).toBeCloseTo(q, 12)
    expect(lb.pValue).toBeCloseTo(chiSquareSurvival(q, 3), 14)
  })
  it('cross-correlation finds a delayed copy at its lag', () => {
    const rand = mulberry32(3)
    const u = Float64Array.from({ length: 400 }, () => rand() - 0.5)
    const e = new Float64Array(400)
    for (let t = 2; t < 400; t++) e[t] = u[t - 2]
    const c = crossCorrelation(u, e, 5)
    expect(c[5 + 2]).toBeGreaterThan(0.95)
    expect(Math.abs(c[5])).toBeLessThan(0.2)
  })
})

describe('fit figures', () => {
  it('NRMSE, RMSE and R² (common practice, no source)', () => {
    const y = [1, 2, 3, 4]
    const yh = [1.1, 1.9, 3.2, 3.8]
    const f = fitMetrics(y, yh)
    expect(f.rmse).toBeCloseTo(Math.sqrt(0.1 / 4), 12)
    expect(f.nrmse).toBeCloseTo(Math.sqrt(0.1 / 5), 12)
    expect(f.r2).toBeCloseTo(1 - 0.1 / 5, 12)
  })
  it('AIC (Akaike 1974) and BIC (Schwarz 1978)', () => {
    expect(aic(2, 10, 3)).toBeCloseTo(10 * Math.log(0.2) + 6, 12)
    expect(bic(2, 10, 3)).toBeCloseTo(10 * Math.log(0.2) + 3 * Math.log(10), 12)
  })
  it('Latin hypercube puts one point in every stratum, log-uniform for wide positive bounds', () => {
    const pts = latinHypercube(Float64Array.from([0, 1e-6]), Float64Array.from([1, 1]), 10, 5)
    const lin = pts.map((p) => Math.floor(p[0] * 10)).sort((a, b) => a - b)
    expect(lin).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9])
    const dec = pts.map((p) => Math.floor(((Math.log10(p[1]) + 6) / 6) * 10)).sort((a, b) => a - b)
    expect(dec).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9])
  })
})
