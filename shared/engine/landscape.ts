/**
 * Cost landscape for a contour plot: the weighted cost on an n×n grid over two estimated quantities,
 * every other quantity held at the estimate (a slice, not a profile). The grid is evenly spaced in each
 * quantity's optimiser coordinate (log-spaced for log-transformed ones); by default it spans the start
 * and the estimate with a margin of half their distance, at least ±4 standard errors, clipped to the
 * bounds. Values in the result are in declared units.
 */
import type { LandscapeResult } from '../api/fit'
import type { FitProblem } from './fit/problem'
import type { BoxTransform } from './fit/transform'
import { sumSquares } from './fit/lsq'

export interface LandscapeRequest {
  x: string
  y: string
  n?: number
  /** ranges in internal units */
  xRange?: [number, number]
  yRange?: [number, number]
}

export function costLandscape(
  prob: FitProblem, theta: Float64Array, start: Float64Array, req: LandscapeRequest, tr: BoxTransform,
  se: Float64Array, declared: (q: number, v: number) => number,
): LandscapeResult {
  const qx = prob.names.indexOf(req.x)
  const qy = prob.names.indexOf(req.y)
  if (qx < 0 || qy < 0 || qx === qy) {
    throw new Error(`landscape: needs two different estimated quantities (estimated: ${prob.names.join(', ')})`)
  }
  const n = Math.max(3, Math.min(201, Math.floor(req.n ?? 41)))
  const axis = (q: number, range?: [number, number]): number[] => {
    const toZ = (v: number) => (tr.isLog[q] ? Math.log(v) : v)
    const fromZ = (z: number) => (tr.isLog[q] ? Math.exp(z) : z)
    let a: number
    let b: number
    if (range) {
      a = toZ(Math.max(prob.lower[q], range[0]))
      b = toZ(Math.min(prob.upper[q], range[1]))
    } else {
      const z1 = toZ(theta[q])
      const z0 = toZ(start[q])
      const seZ = Number.isFinite(se[q]) ? (tr.isLog[q] ? se[q] / theta[q] : se[q]) : 0
      const margin = Math.max(0.5 * Math.abs(z1 - z0), 4 * seZ, 1e-3 * (tr.zHi[q] - tr.zLo[q]))
      a = Math.max(tr.zLo[q], Math.min(z0, z1) - margin)
      b = Math.min(tr.zHi[q], Math.max(z0, z1) + margin)
    }
    return Array.from({ length: n }, (_, i) => fromZ(a + ((b - a) * i) / (n - 1)))
  }
  const xs = axis(qx, req.xRange)
  const ys = axis(qy, req.yRange)
  const th = Float64Array.from(theta)
  const r = new Float64Array(prob.m)
  const cost: (number | null)[][] = []
  for (let iy = 0; iy < n; iy++) {
    const rowv: (number | null)[] = []
    th[qy] = ys[iy]
    for (let ix = 0; ix < n; ix++) {
      th[qx] = xs[ix]
      const ok = prob.evaluate(th, r, null)
      const c = ok ? sumSquares(r) : NaN
      rowv.push(Number.isFinite(c) ? c : null)
    }
    cost.push(rowv)
  }
  const q = prob.quantities
  return {
    x: { name: q[qx].name, experiment: q[qx].experiment, values: xs.map((v) => declared(qx, v)), log: tr.isLog[qx] },
    y: { name: q[qy].name, experiment: q[qy].experiment, values: ys.map((v) => declared(qy, v)), log: tr.isLog[qy] },
    cost,
    start: [declared(qx, start[qx]), declared(qy, start[qy])],
    estimate: [declared(qx, theta[qx]), declared(qy, theta[qy])],
  }
}
