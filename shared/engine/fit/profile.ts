/**
 * Profile-likelihood interval of one estimated quantity: hold θ_q at trial values, re-fit every other
 * quantity, and find where the profiled cost S(θ_q) crosses S* + s²·t²_{N−p, 0.975}, i.e. where the
 * profile t statistic τ(θ_q) = sign·√((S(θ_q) − S*)/s²) reaches the t quantile (D. M. Bates & D. G. Watts,
 * Nonlinear Regression Analysis and Its Applications, 1988, Sec. 6.1.1, eq. 6.2 and 6.8).
 * Search: steps of one standard error outward (doubling), then bisection on the bracket. When the
 * profile does not cross before a bound the interval end is that bound.
 */
import type { FitProblem } from './problem'
import type { FitOptions } from './options'
import { resolveTolerances } from './options'
import { levenbergMarquardt } from './lm'
import { sumSquares, type LsqProblem } from './lsq'

export async function profileInterval(
  prob: FitProblem, thetaHat: Float64Array, q: number, sseHat: number, s2: number, t: number, se: number,
  opts: FitOptions, deadline?: number,
): Promise<[number, number]> {
  const n = prob.n
  const m = prob.m
  const threshold = sseHat + s2 * t * t
  const keep = Array.from({ length: n }, (_, j) => j).filter((j) => j !== q)
  const full = Float64Array.from(thetaHat)
  const jacFull = new Float64Array(m * n)
  let fixedValue = thetaHat[q]
  const reduced: LsqProblem = {
    n: n - 1, m,
    lower: Float64Array.from(keep, (j) => prob.lower[j]),
    upper: Float64Array.from(keep, (j) => prob.upper[j]),
    names: keep.map((j) => prob.names[j]),
    evaluate(th, r, jac) {
      keep.forEach((j, k) => (full[j] = th[k]))
      full[q] = fixedValue
      if (!prob.evaluate(full, r, jac ? jacFull : null)) return false
      if (jac) keep.forEach((j, k) => jac.set(jacFull.subarray(j * m, (j + 1) * m), k * m))
      return true
    },
  }
  const tol = resolveTolerances(opts)
  let warm = Float64Array.from(keep, (j) => thetaHat[j])
  const r = new Float64Array(m)
  const profiled = async (v: number): Promise<number> => {
    fixedValue = v
    if (n === 1) {
      full[q] = v
      return prob.evaluate(full, r, null) ? sumSquares(r) : Infinity
    }
    const res = await levenbergMarquardt(reduced, warm, {
      ftol: tol.ftol, xtol: tol.xtol, gtol: tol.gtol, maxIterations: 100,
      logTransform: opts.logTransform ?? true, signal: opts.signal, deadline,
    })
    if (res.status === 'failed') return Infinity
    warm = Float64Array.from(res.theta)
    return res.cost
  }
  const lo = prob.lower[q]
  const hi = prob.upper[q]
  const step0 = Number.isFinite(se) && se > 0 ? se : 0.01 * (hi - lo)
  const ends: [number, number] = [lo, hi]
  for (const dir of [-1, 1]) {
    warm = Float64Array.from(keep, (j) => thetaHat[j])
    let inside = thetaHat[q]
    let h = step0
    let outside = NaN
    for (let k = 0; k < 40; k++) {
      const v = Math.min(hi, Math.max(lo, thetaHat[q] + dir * h))
      const c = await profiled(v)
      if (c > threshold) {
        outside = v
        break
      }
      inside = v
      if (v === lo || v === hi) break
      h *= 1.6
    }
    if (Number.isNaN(outside)) {
      ends[dir < 0 ? 0 : 1] = dir < 0 ? lo : hi
      continue
    }
    for (let k = 0; k < 30; k++) {
      const mid = 0.5 * (inside + outside)
      const c = await profiled(mid)
      if (c > threshold) outside = mid
      else inside = mid
      if (Math.abs(outside - inside) <= 1e-6 * Math.abs(step0)) break
    }
    ends[dir < 0 ? 0 : 1] = 0.5 * (inside + outside)
  }
  return ends
}
