/**
 * Goodness-of-fit figures.
 * - NRMSE = ‖y − ŷ‖ / ‖y − mean(y)‖, RMSE = ‖y − ŷ‖/√N, R² = 1 − NRMSE² (the coefficient of determination,
 *   common practice, no source).
 * - AIC = N·ln(SSE/N) + 2p: H. Akaike, "A new look at the statistical model identification",
 *   IEEE Trans. Automatic Control 19 (1974) 716–723 (Gaussian errors, unknown variance, constants dropped).
 * - BIC = N·ln(SSE/N) + p·ln N: G. Schwarz, "Estimating the dimension of a model",
 *   Annals of Statistics 6 (1978) 461–464.
 */
export interface FitMetrics {
  n: number
  nrmse: number
  rmse: number
  r2: number
}

export function fitMetrics(y: ArrayLike<number>, yhat: ArrayLike<number>): FitMetrics {
  const n = y.length
  let mean = 0
  for (let i = 0; i < n; i++) mean += y[i]
  mean /= n || 1
  let sse = 0
  let sst = 0
  for (let i = 0; i < n; i++) {
    const e = y[i] - yhat[i]
    sse += e * e
    sst += (y[i] - mean) * (y[i] - mean)
  }
  const nrmse = sst > 0 ? Math.sqrt(sse / sst) : sse > 0 ? Infinity : 0
  return { n, nrmse, rmse: n > 0 ? Math.sqrt(sse / n) : NaN, r2: sst > 0 ? 1 - sse / sst : NaN }
}

export function aic(sse: number, n: number, p: number): number {
  return n * Math.log(sse / n) + 2 * p
}

export function bic(sse: number, n: number, p: number): number {
  return n * Math.log(sse / n) + p * Math.log(n)
}
