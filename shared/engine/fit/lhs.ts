/**
 * Latin-hypercube starting points within the bounds: M. D. McKay, R. J. Beckman & W. J. Conover,
 * "A comparison of three methods for selecting values of input variables in the analysis of output from
 * a computer code", Technometrics 21 (1979) 239–245. Each coordinate's range is cut into N equal strata
 * (in ln θ where the log transform applies, i.e. log-uniform), one point per stratum, strata paired by
 * independent random permutations. Random numbers: the mulberry32 generator (T. Ettinger, 2017, public
 * domain), seeded, so a fit is repeatable.
 */
import { BoxTransform } from './transform'

export function mulberry32(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export function latinHypercube(
  lower: Float64Array, upper: Float64Array, count: number, seed: number, logEnabled: boolean | boolean[] = true,
): Float64Array[] {
  const n = lower.length
  const tr = new BoxTransform(lower, upper, logEnabled)
  const rand = mulberry32(seed)
  const pts = Array.from({ length: count }, () => new Float64Array(n))
  for (let j = 0; j < n; j++) {
    const perm = Array.from({ length: count }, (_, i) => i)
    for (let i = count - 1; i > 0; i--) {
      const k = Math.floor(rand() * (i + 1))
      const tmp = perm[i]
      perm[i] = perm[k]
      perm[k] = tmp
    }
    for (let i = 0; i < count; i++) {
      const u = (perm[i] + rand()) / count
      const zz = tr.zLo[j] + u * (tr.zHi[j] - tr.zLo[j])
      const v = tr.isLog[j] ? Math.exp(zz) : zz
      pts[i][j] = Math.min(upper[j], Math.max(lower[j], v))
    }
  }
  return pts
}
