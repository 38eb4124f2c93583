/**
 * The downhill simplex method of J. A. Nelder & R. Mead, "A simplex method for function minimization",
 * The Computer Journal 7 (1965) 308–313, with the standard coefficients (reflection ρ = 1, expansion
 * χ = 2, contraction γ = 0.5, shrink σ = 0.5) and the inside/outside contractions of J. C. Lagarias,
 * J. A. Reeds, M. H. Wright & P. E. Wright, "Convergence properties of the Nelder–Mead simplex method in
 * low dimensions", SIAM J. Optim. 9 (1998) 112–147.
 *
 * The sequence of trial points is the one of the fmin package's `nelderMead` (initial simplex x₀ and
 * x₀ with one coordinate scaled by 1.1, or set to 0.001 when it is zero; the same stopping test), so a
 * run that never shrinks visits the same points. fmin 0.0.4 itself cannot be used: its shrink step
 * assigns an undeclared loop variable, which throws a ReferenceError in strict (module) code, so any
 * start whose simplex has to shrink failed. Here the vertices live in one typed array and nothing is
 * allocated per iteration.
 */

export interface SimplexOptions {
  /** at most this many iterations (one reflection each, plus expansion/contraction/shrink) */
  maxIterations: number
  /** stop when the cost spread over the simplex and the spread of its two best vertices are below it */
  tolerance: number
  /** initial simplex: a non-zero coordinate is multiplied by this (fmin's nonZeroDelta) */
  nonZeroDelta?: number
  /** initial simplex: a zero coordinate becomes this (fmin's zeroDelta) */
  zeroDelta?: number
  /** told the number of each iteration as it begins (0, 1, …) */
  onIteration?: (iteration: number) => void
}

export interface SimplexResult {
  /** best vertex */
  x: Float64Array
  fx: number
  iterations: number
  /** the stopping test passed (otherwise the iteration limit ended the run) */
  converged: boolean
  shrinks: number
}

/** Reflection, expansion, contraction and shrink coefficients (Nelder & Mead 1965; Lagarias et al. 1998). */
const RHO = 1
const CHI = 2
const PSI = -0.5
const SIGMA = 0.5

/**
 * Minimises f from x0. `f` receives a scratch vector it must not keep. Exceptions thrown by `f` (abort,
 * budget) pass through to the caller.
 */
export function simplexMinimise(f: (x: Float64Array) => number, x0: ArrayLike<number>, opts: SimplexOptions): SimplexResult {
  const N = x0.length
  const nonZeroDelta = opts.nonZeroDelta ?? 1.05
  const zeroDelta = opts.zeroDelta ?? 0.001
  const tol = opts.tolerance
  const V = new Float64Array((N + 1) * N) // vertex k at k·N
  const fv = new Float64Array(N + 1)
  // order[r] = the vertex of rank r (0 best); a stable sort keeps equal costs in their previous order
  const order: number[] = Array.from({ length: N + 1 }, (_, k) => k)
  const centroid = new Float64Array(N)
  const reflected = new Float64Array(N)
  const expanded = new Float64Array(N)
  const contracted = new Float64Array(N)
  const scratch = new Float64Array(N)
  const evalAt = (p: Float64Array, at = 0) => {
    for (let i = 0; i < N; i++) scratch[i] = p[at + i]
    return f(scratch)
  }
  for (let i = 0; i < N; i++) V[i] = x0[i]
  fv[0] = evalAt(V, 0)
  for (let i = 0; i < N; i++) {
    const at = (i + 1) * N
    for (let j = 0; j < N; j++) V[at + j] = x0[j]
    V[at + i] = x0[i] ? x0[i] * nonZeroDelta : zeroDelta
    fv[i + 1] = evalAt(V, at)
  }
  const byCost = (a: number, b: number) => fv[a] - fv[b]
  /** the worst vertex (rank N) takes the point p */
  const replaceWorst = (p: Float64Array, fp: number) => {
    const at = order[N] * N
    for (let i = 0; i < N; i++) V[at + i] = p[i]
    fv[order[N]] = fp
  }
  let iterations = 0
  let converged = false
  let shrinks = 0
  for (; iterations < opts.maxIterations; iterations++) {
    opts.onIteration?.(iterations)
    order.sort(byCost)
    const best = order[0] * N
    const second = order[1] * N
    const worst = order[N] * N
    let maxDiff = 0
    for (let i = 0; i < N; i++) maxDiff = Math.max(maxDiff, Math.abs(V[best + i] - V[second + i]))
    if (Math.abs(fv[order[0]] - fv[order[N]]) < tol && maxDiff < tol) { converged = true; break }
    // centroid of all but the worst vertex
    for (let i = 0; i < N; i++) {
      let s = 0
      for (let r = 0; r < N; r++) s += V[order[r] * N + i]
      centroid[i] = s / N
    }
    for (let i = 0; i < N; i++) reflected[i] = (1 + RHO) * centroid[i] + -RHO * V[worst + i]
    const fr = evalAt(reflected)
    if (fr < fv[order[0]]) {
      for (let i = 0; i < N; i++) expanded[i] = (1 + CHI) * centroid[i] + -CHI * V[worst + i]
      const fe = evalAt(expanded)
      if (fe < fr) replaceWorst(expanded, fe)
      else replaceWorst(reflected, fr)
    } else if (fr >= fv[order[N - 1]]) {
      let shrink = false
      if (fr > fv[order[N]]) {
        // inside contraction
        for (let i = 0; i < N; i++) contracted[i] = (1 + PSI) * centroid[i] + -PSI * V[worst + i]
        const fc = evalAt(contracted)
        if (fc < fv[order[N]]) replaceWorst(contracted, fc)
        else shrink = true
      } else {
        // outside contraction
        for (let i = 0; i < N; i++) contracted[i] = (1 - PSI * RHO) * centroid[i] + PSI * RHO * V[worst + i]
        const fc = evalAt(contracted)
        if (fc < fr) replaceWorst(contracted, fc)
        else shrink = true
      }
      if (shrink) {
        // every vertex but the best moves halfway towards it
        shrinks++
        for (let r = 1; r <= N; r++) {
          const at = order[r] * N
          for (let i = 0; i < N; i++) V[at + i] = (1 - SIGMA) * V[best + i] + SIGMA * V[at + i]
          fv[order[r]] = evalAt(V, at)
        }
      }
    } else {
      replaceWorst(reflected, fr)
    }
  }
  order.sort(byCost)
  const x = V.slice(order[0] * N, order[0] * N + N)
  return { x, fx: fv[order[0]], iterations, converged, shrinks }
}
