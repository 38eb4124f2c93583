/**
 * Latin-hypercube starting points within the bounds: M. D. McKay, R. J. Beckman & W. J. Conover,
 * "A comparison of three methods for selecting values of input variables in the analysis of output from
 * a computer code", Technometrics 21 (1979) 239–245. Each coordinate's range is cut into N equal strata
 * (in ln θ where the log transform applies, i.e. log-uniform), one point per stratum, strata paired by
 * independent random permutations. Random numbers: the seeded mulberry32 generator (../random.ts), so a
 * fit is repeatable.
 */
import { BoxTransform } from './transform'
import { mulberry32 } from '../random'

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
