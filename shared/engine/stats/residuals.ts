/**
 * Residual whiteness and independence checks.
 *
 * - Sample autocorrelation r_k = Σ_{t=k+1..N} e_t e_{t−k} / Σ e_t² (residuals taken about their mean) and the
 *   input–residual cross-correlation r_ue(τ), the usual estimators of G. E. P. Box & G. M. Jenkins,
 *   Time Series Analysis: Forecasting and Control, 1970, Sec. 2.1.5 and 11.1.
 * - 95 % band ±1.96/√N for a white sequence (Box & Jenkins 1970, Sec. 2.1.6; Bartlett's large-lag variance).
 * - Ljung–Box portmanteau statistic Q = N(N+2) Σ_{k=1..L} r_k²/(N−k), compared with χ²(L):
 *   G. M. Ljung & G. E. P. Box, "On a measure of lack of fit in time series models",
 *   Biometrika 65 (1978) 297–303, eq. (2.1).
 *
 * - Independence of the residuals from an input: S = N Σ_{τ=0..L} r_ue(τ)², compared with χ²(L + 1)
 *   (the cross-correlation check of Box & Jenkins 1970, Sec. 11.3.1, from memory; the τ ≥ 0 lags are
 *   the residual against present and past inputs).
 *
 * Lag rule: L = min(N − 1, max(1, ⌊10·log10 N⌋)), the default maximum lag of common statistics
 * packages' autocorrelation plots (common practice, no source); it grows with N but slowly, so each r_k
 * still averages many products. Samples are taken in their stored order; uneven sampling or gaps
 * left by empty cells make the lags approximate.
 */
import { chiSquareSurvival } from './distributions'

export function maxLagFor(n: number): number {
  if (n < 2) return 0
  return Math.min(n - 1, Math.max(1, Math.floor(10 * Math.log10(n))))
}

/** Autocorrelation r_1..r_L of e (about its mean). */
export function autocorrelation(e: ArrayLike<number>, maxLag: number): Float64Array {
  const n = e.length
  let mean = 0
  for (let i = 0; i < n; i++) mean += e[i]
  mean /= n || 1
  let c0 = 0
  for (let i = 0; i < n; i++) c0 += (e[i] - mean) * (e[i] - mean)
  const r = new Float64Array(maxLag)
  if (c0 === 0) return r
  for (let k = 1; k <= maxLag; k++) {
    let s = 0
    for (let i = k; i < n; i++) s += (e[i] - mean) * (e[i - k] - mean)
    r[k - 1] = s / c0
  }
  return r
}

/**
 * Cross-correlation r_ue(τ) for τ = −L..L (index τ + L): Σ_t (u_{t−τ} − ū)(e_t − ē) / √(Σ(u−ū)² Σ(e−ē)²).
 * Positive τ: the residual against past inputs.
 */
export function crossCorrelation(u: ArrayLike<number>, e: ArrayLike<number>, maxLag: number): Float64Array {
  const n = Math.min(u.length, e.length)
  let mu = 0
  let me = 0
  for (let i = 0; i < n; i++) {
    mu += u[i]
    me += e[i]
  }
  mu /= n || 1
  me /= n || 1
  let su = 0
  let se = 0
  for (let i = 0; i < n; i++) {
    su += (u[i] - mu) * (u[i] - mu)
    se += (e[i] - me) * (e[i] - me)
  }
  const out = new Float64Array(2 * maxLag + 1)
  const den = Math.sqrt(su * se)
  if (!(den > 0)) return out
  for (let tau = -maxLag; tau <= maxLag; tau++) {
    let s = 0
    for (let t = Math.max(0, tau); t < Math.min(n, n + tau); t++) s += (u[t - tau] - mu) * (e[t] - me)
    out[tau + maxLag] = s / den
  }
  return out
}

export interface LjungBox {
  q: number
  lags: number
  pValue: number
}

export function ljungBox(r: ArrayLike<number>, n: number, lags = r.length): LjungBox {
  let q = 0
  for (let k = 1; k <= lags; k++) q += (r[k - 1] * r[k - 1]) / (n - k)
  q *= n * (n + 2)
  return { q, lags, pValue: lags > 0 ? chiSquareSurvival(q, lags) : 1 }
}

/** Half-width of the 95 % band of a white sequence's correlation estimates. */
export function whiteBand(n: number): number {
  return n > 0 ? 1.96 / Math.sqrt(n) : Infinity
}

export interface IndependenceTest {
  statistic: number
  dof: number
  pValue: number
}

/** The cross-correlation check over τ = 0..L of `r` as returned by crossCorrelation (index τ + L). */
export function independenceTest(r: ArrayLike<number>, maxLag: number, n: number): IndependenceTest {
  let s = 0
  for (let tau = 0; tau <= maxLag; tau++) s += r[tau + maxLag] * r[tau + maxLag]
  const statistic = n * s
  return { statistic, dof: maxLag + 1, pValue: chiSquareSurvival(statistic, maxLag + 1) }
}

/** Median spacing of sample times (0 for fewer than two samples). */
export function medianStep(t: ArrayLike<number>): number {
  if (t.length < 2) return 0
  const d = new Float64Array(t.length - 1)
  for (let i = 1; i < t.length; i++) d[i - 1] = t[i] - t[i - 1]
  d.sort()
  const h = d.length >> 1
  return d.length % 2 ? d[h] : 0.5 * (d[h - 1] + d[h])
}
