/**
 * Residual whiteness by the cumulative periodogram and the Kolmogorov–Smirnov band.
 *
 * Periodogram at the Fourier frequencies f_i = i/N (cycles per sample), i = 1..q, q = ⌊(N − 1)/2⌋ (the
 * Nyquist frequency is left out), of the residuals taken about their mean:
 *   I(f_i) = (2/N)·|Σ_t e_t e^{−2πi f_i t}|²,
 * normalised cumulative periodogram C(f_j) = Σ_{i≤j} I(f_i) / Σ_{i≤q} I(f_i). For a white series C rises
 * along the straight line from (0, 0) to (0.5, 1); the 95 % band lies ±K/√q about it with K = 1.36:
 * G. E. P. Box & G. M. Jenkins, Time Series Analysis: Forecasting and Control, 1970, Sec. 8.2.4 (the
 * cumulative periodogram check) and Table of the Kolmogorov–Smirnov limits K_ε (ε = 0.05 → 1.36).
 *
 * Test statistic D = max_j |C(f_j) − j/q|; p-value from Kolmogorov's limiting distribution
 * Q_KS(λ) = 2 Σ_{k≥1} (−1)^{k−1} e^{−2k²λ²} at λ = √q·D (so p = 0.05 exactly where D meets the band
 * edge 1.358/√q), and for small λ the equivalent form 1 − (√(2π)/λ) Σ_{k≥1} e^{−(2k−1)²π²/(8λ²)}:
 * W. H. Press et al., Numerical Recipes, 3rd ed., 2007, Sec. 6.14.12 (from memory; checked in the
 * tests against scipy.stats.kstwobign).
 */
import { dftPower } from './fft'

/** The 5 % Kolmogorov–Smirnov constant (Box & Jenkins 1970, Sec. 8.2.4). */
export const KS_95 = 1.36

export interface CumulativePeriodogram {
  /** frequencies f_j = j/N in cycles per sample, j = 1..q */
  frequency: Float64Array
  /** C(f_j), ending at 1 */
  cumulative: Float64Array
  q: number
  /** half-width of the 95 % band, 1.36/√q */
  band: number
  /** largest distance from the white line */
  d: number
  pValue: number
}

/** Kolmogorov's limiting survival function Q_KS(λ) = P(√n·D_n > λ). */
export function kolmogorovSurvival(lambda: number): number {
  if (!(lambda > 0)) return 1
  if (lambda < 1.18) {
    const a = (-Math.PI * Math.PI) / (8 * lambda * lambda)
    let s = 0
    for (let k = 1; k <= 8; k++) s += Math.exp(a * (2 * k - 1) * (2 * k - 1))
    return Math.min(1, Math.max(0, 1 - (Math.sqrt(2 * Math.PI) / lambda) * s))
  }
  let s = 0
  for (let k = 1; k <= 100; k++) {
    const term = Math.exp(-2 * k * k * lambda * lambda)
    s += k % 2 === 1 ? term : -term
    if (term < 1e-17) break
  }
  return Math.min(1, Math.max(0, 2 * s))
}

export function cumulativePeriodogram(e: ArrayLike<number>): CumulativePeriodogram | null {
  const n = e.length
  const q = Math.floor((n - 1) / 2)
  if (q < 2) return null
  let mean = 0
  for (let i = 0; i < n; i++) mean += e[i]
  mean /= n
  const x = new Float64Array(n)
  for (let i = 0; i < n; i++) x[i] = e[i] - mean
  const pow = dftPower(x, q)
  const frequency = new Float64Array(q)
  const cumulative = new Float64Array(q)
  let total = 0
  for (let j = 1; j <= q; j++) total += pow[j]
  if (!(total > 0)) return null
  let s = 0
  let d = 0
  for (let j = 1; j <= q; j++) {
    s += pow[j]
    frequency[j - 1] = j / n
    cumulative[j - 1] = s / total
    const dev = Math.abs(cumulative[j - 1] - j / q)
    if (dev > d) d = dev
  }
  return { frequency, cumulative, q, band: KS_95 / Math.sqrt(q), d, pValue: kolmogorovSurvival(Math.sqrt(q) * d) }
}
