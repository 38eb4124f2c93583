/**
 * Band of the simulated output from the parameter covariance, by first-order propagation through the
 * output sensitivities: with s = ∂ŷ(t)/∂θ at the estimate and Σ the linearised covariance of θ̂,
 *   Var ŷ(t) ≈ sᵀ Σ s,   band ŷ(t) ± t_{0.975, N−p}·√(sᵀ Σ s).
 * This is the linear-approximation confidence band for the expected response of D. M. Bates &
 * D. G. Watts, Nonlinear Regression Analysis and Its Applications, 1988, Sec. 2.3.2 (from memory), and
 * the delta method of G. A. F. Seber & C. J. Wild, Nonlinear Regression, 1989, Sec. 5.1 (from memory).
 * It shows how far the output could move with the estimates' uncertainty; it is not a prediction interval
 * for new measurements (that would add the noise variance).
 */

/**
 * @param dy sensitivities as the simulator returns them: dy[(k·ny + j)·ns + c]
 * @param rows number of (time, output) rows k·ny + j
 * @param ns sensitivity columns per row
 * @param cols for each sensitivity column c, its index into the covariance, or −1 to leave it out
 * @param cov row-major nq×nq covariance of the estimated quantities (internal units)
 * @param factor multiplier of the standard deviation (the t quantile for a 95 % band)
 * @returns half-width of the band per row
 */
export function outputBandHalfWidth(
  dy: Float64Array, rows: number, ns: number, cols: ArrayLike<number>, cov: Float64Array, nq: number, factor: number,
): Float64Array {
  const out = new Float64Array(rows)
  for (let r = 0; r < rows; r++) {
    const base = r * ns
    let v = 0
    for (let a = 0; a < ns; a++) {
      const qa = cols[a]
      if (qa < 0) continue
      const sa = dy[base + a]
      if (sa === 0) continue
      for (let b = 0; b < ns; b++) {
        const qb = cols[b]
        if (qb < 0) continue
        v += sa * cov[qa * nq + qb] * dy[base + b]
      }
    }
    out[r] = v > 0 ? factor * Math.sqrt(v) : 0
  }
  return out
}

/**
 * Covariance Σ_ab = se_a·se_b·r_ab from standard errors and correlations; a quantity with se 0 (held at a
 * bound) contributes nothing; null when a needed entry is missing.
 */
export function covarianceFrom(se: ArrayLike<number>, corr: ArrayLike<ArrayLike<number | null>>): Float64Array | null {
  const n = se.length
  const cov = new Float64Array(n * n)
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      if (se[a] === 0 || se[b] === 0) continue
      const r = a === b ? 1 : corr[a][b]
      if (r === null || !Number.isFinite(r) || !Number.isFinite(se[a]) || !Number.isFinite(se[b])) return null
      cov[a * n + b] = se[a] * se[b] * r
    }
  }
  return cov
}
