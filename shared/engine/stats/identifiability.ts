/**
 * What the data determine when the scaled Jacobian is rank-deficient.
 *
 * Let J·D⁻¹ = U·S·Vᵀ with D the column norms (covariance.ts). The right singular vectors whose singular
 * values fall below the cutoff span the (numerical) null space: moving θ along D⁻¹·v leaves the fitted
 * outputs unchanged to first order (G. H. Golub & C. F. Van Loan, Matrix Computations, 4th ed., 2013,
 * Sec. 5.5.2 on rank deficiency; the sensitivity-based identifiability analysis of R. Brun, P. Reichert
 * & H. R. Künsch, "Practical identifiability analysis of large environmental simulation models", Water
 * Resour. Res. 37 (2001) 1015–1030, Sec. 3).
 *
 * - A quantity whose coordinate axis has a component of at least `NULL_COMPONENT` in the null space is
 *   "not determined by these data": no standard error, no linearised interval.
 * - The combinations that are determined: the orthogonal complement of the null space within the
 *   undetermined quantities, in ln θ for positive quantities (so a product a·b shows as ln a + ln b,
 *   written back as a·b) and in θ itself otherwise. The complement basis is built by Gram–Schmidt
 *   from the coordinate axes; exponents within 0.05 of a multiple of ½ are written as such.
 */

/** a quantity is undetermined when its squared component in the null space is at least this² */
export const NULL_COMPONENT = 0.01

export interface IdentifiabilityInput {
  /** n×n row-major right singular vectors of the unit-column-scaled Jacobian (columns, descending σ) */
  v: Float64Array
  /** singular values, descending */
  s: Float64Array
  /** the column norms of the unscaled Jacobian */
  norms: Float64Array
  /** estimates (internal units) */
  theta: ArrayLike<number>
  names: string[]
  /** relative singular value cutoff */
  cutoff: number
}

export interface IdentifiabilityReport {
  rank: number
  relativeSingularValues: number[]
  /** indices of undetermined quantities */
  undetermined: number[]
  combinations: string[]
}

export function analyseIdentifiability(a: IdentifiabilityInput): IdentifiabilityReport {
  const n = a.s.length
  const smax = n > 0 ? a.s[0] : 0
  const rel = Array.from(a.s, (x) => (smax > 0 ? x / smax : 0))
  let rank = 0
  for (let k = 0; k < n; k++) if (rel[k] > a.cutoff) rank++
  // a zero column (the output does not depend on it at all) is a null direction of its own
  const zeroCols: number[] = []
  for (let j = 0; j < n; j++) if (!(a.norms[j] > 0)) zeroCols.push(j)
  if (rank === n && zeroCols.length === 0) return { rank, relativeSingularValues: rel, undetermined: [], combinations: [] }
  const nullDirs: number[][] = []
  for (let k = rank; k < n; k++) nullDirs.push(Array.from({ length: n }, (_, j) => a.v[j * n + k]))
  const weight = new Float64Array(n)
  for (const d of nullDirs) for (let j = 0; j < n; j++) weight[j] += d[j] * d[j]
  for (const j of zeroCols) weight[j] = 1
  const undetermined: number[] = []
  for (let j = 0; j < n; j++) if (weight[j] >= NULL_COMPONENT * NULL_COMPONENT) undetermined.push(j)
  const combinations: string[] = []
  const live = undetermined.filter((j) => !zeroCols.includes(j))
  for (const j of zeroCols) combinations.push(`the outputs do not depend on '${a.names[j]}' at all`)
  if (live.length > 0) {
    const positive = live.every((j) => a.theta[j] > 0)
    // null directions in the naming coordinates (ln θ or θ), restricted to the live undetermined set
    const toNaming = (j: number, vj: number) => (positive ? vj / (a.norms[j] * a.theta[j]) : vj / a.norms[j])
    const basis: number[][] = []
    for (const d of nullDirs) {
      const w = live.map((j) => toNaming(j, d[j]))
      const o = orthogonalise(w, basis)
      if (o) basis.push(o)
    }
    const determined: number[][] = []
    const k = live.length - basis.length
    const candidates = live.map((_, i) => {
      const e = new Array<number>(live.length).fill(0)
      e[i] = 1
      return e
    })
    while (determined.length < k) {
      let bestVec: number[] | null = null
      let bestNorm = 0
      for (const e of candidates) {
        const r = residualAfter(e, [...basis, ...determined])
        const nr = Math.hypot(...r)
        if (nr > bestNorm + 1e-12) {
          bestNorm = nr
          bestVec = r
        }
      }
      if (!bestVec || bestNorm < 1e-9) break
      determined.push(bestVec.map((x) => x / bestNorm))
    }
    const names = live.map((j) => a.names[j])
    const separately = names.length === 2 ? `${names[0]} and ${names[1]} separately are not` : `${names.slice(0, -1).join(', ')} and ${names[names.length - 1]} separately are not`
    if (determined.length === 0) combinations.push(`neither ${names.join(' nor ')} is determined by these data`)
    for (const w of determined) combinations.push(`${positive ? productText(w, names) : sumText(w, names)} is determined; ${separately}`)
  }
  return { rank, relativeSingularValues: rel, undetermined, combinations }
}

function residualAfter(w: number[], basis: number[][]): number[] {
  const r = w.slice()
  for (const b of basis) {
    let dot = 0
    for (let i = 0; i < r.length; i++) dot += r[i] * b[i]
    for (let i = 0; i < r.length; i++) r[i] -= dot * b[i]
  }
  return r
}

function orthogonalise(w: number[], basis: number[][]): number[] | null {
  const r = residualAfter(w, basis)
  const nr = Math.hypot(...r)
  return nr > 1e-9 * Math.max(1, Math.hypot(...w)) ? r.map((x) => x / nr) : null
}

/** exponents scaled so the largest is 1 (first non-zero positive), rounded to ½ when close */
function exponents(w: number[]): number[] {
  let big = 0
  for (const x of w) if (Math.abs(x) > Math.abs(big)) big = x
  return w.map((x) => {
    const e = x / big
    const half = Math.round(e * 2) / 2
    return Math.abs(e - half) <= 0.05 ? half : Number(e.toFixed(2))
  })
}

function powerText(name: string, e: number): string {
  const a = Math.abs(e)
  return a === 1 ? name : a === 0.5 ? `√${name}` : `${name}^${a}`
}

/** ln-coordinate combination as a product of powers: [1, 1] → a·b, [1, −1] → a/b */
export function productText(w: number[], names: string[]): string {
  const e = exponents(w)
  const num = names.flatMap((nm, i) => (e[i] > 0 ? [powerText(nm, e[i])] : []))
  const den = names.flatMap((nm, i) => (e[i] < 0 ? [powerText(nm, e[i])] : []))
  const top = num.length ? num.join('·') : '1'
  return den.length === 0 ? top : den.length === 1 ? `${top}/${den[0]}` : `${top}/(${den.join('·')})`
}

/** linear combination: [1, 2] → a + 2·b */
export function sumText(w: number[], names: string[]): string {
  const e = exponents(w)
  return names
    .map((nm, i) => ({ nm, c: e[i] }))
    .filter((t) => t.c !== 0)
    .map((t, i) => `${t.c < 0 ? (i ? ' − ' : '−') : i ? ' + ' : ''}${Math.abs(t.c) === 1 ? '' : `${Math.abs(t.c)}·`}${t.nm}`)
    .join('')
}
