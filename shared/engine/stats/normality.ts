/**
 * Normality of the residuals by the Jarque–Bera test: with the sample skewness S = m₃/m₂^{3/2} and
 * kurtosis K = m₄/m₂² (central moments m_k = (1/N) Σ (e − ē)^k),
 *   JB = (N/6)·(S² + (K − 3)²/4),
 * asymptotically χ² with 2 degrees of freedom under normality, so p = e^{−JB/2}:
 * C. M. Jarque & A. K. Bera, "A test for normality of observations and regression residuals",
 * International Statistical Review 55 (1987) 163–172. The χ²(2) tail is exact in closed form.
 * Checked in the tests against scipy.stats.jarque_bera.
 */
export interface NormalityTest {
  test: 'jarque-bera'
  statistic: number
  pValue: number
  skewness: number
  /** kurtosis (3 for a normal distribution) */
  kurtosis: number
}

export function jarqueBera(e: ArrayLike<number>): NormalityTest | null {
  const n = e.length
  if (n < 3) return null
  let mean = 0
  for (let i = 0; i < n; i++) mean += e[i]
  mean /= n
  let m2 = 0
  let m3 = 0
  let m4 = 0
  for (let i = 0; i < n; i++) {
    const d = e[i] - mean
    const d2 = d * d
    m2 += d2
    m3 += d2 * d
    m4 += d2 * d2
  }
  m2 /= n
  m3 /= n
  m4 /= n
  if (!(m2 > 0)) return null
  const skewness = m3 / Math.pow(m2, 1.5)
  const kurtosis = m4 / (m2 * m2)
  const statistic = (n / 6) * (skewness * skewness + ((kurtosis - 3) * (kurtosis - 3)) / 4)
  return { test: 'jarque-bera', statistic, pValue: Math.exp(-statistic / 2), skewness, kurtosis }
}
