/**
 * Coordinates the optimisers work in.
 *
 * LM: z_j = θ_j, or z_j = ln θ_j for a positive parameter whose bounds span more than two decades
 * (upper/lower > 100) when the log transform is on; bounds map to [ln lo, ln hi]. Steps are taken in z and
 * projected onto the box (projection, not reflection).
 *
 * Nelder–Mead: an unconstrained w with θ = lo + (hi − lo)·sin²(w) (in ln θ for log parameters), the
 * transformation of M. J. Box, "A comparison of several current optimization methods, and the use of
 * transformations in constrained problems", The Computer Journal 9 (1966) 67–77, Sec. 5.
 */
export function useLog(lower: number, upper: number, enabled: boolean): boolean {
  return enabled && lower > 0 && Number.isFinite(upper) && upper / lower > 100
}

export class BoxTransform {
  readonly n: number
  readonly isLog: boolean[]
  readonly zLo: Float64Array
  readonly zHi: Float64Array

  constructor(readonly lower: Float64Array, readonly upper: Float64Array, logEnabled: boolean | boolean[]) {
    this.n = lower.length
    this.isLog = Array.from({ length: this.n }, (_, j) =>
      useLog(lower[j], upper[j], Array.isArray(logEnabled) ? logEnabled[j] : logEnabled))
    this.zLo = new Float64Array(this.n)
    this.zHi = new Float64Array(this.n)
    for (let j = 0; j < this.n; j++) {
      this.zLo[j] = this.isLog[j] ? Math.log(lower[j]) : lower[j]
      this.zHi[j] = this.isLog[j] ? Math.log(upper[j]) : upper[j]
    }
  }

  toZ(theta: ArrayLike<number>, z: Float64Array): void {
    for (let j = 0; j < this.n; j++) z[j] = this.isLog[j] ? Math.log(theta[j]) : theta[j]
  }

  toTheta(z: ArrayLike<number>, theta: Float64Array): void {
    for (let j = 0; j < this.n; j++) {
      const v = this.isLog[j] ? Math.exp(z[j]) : z[j]
      // keep exactly inside the box despite exp/log rounding
      theta[j] = Math.min(this.upper[j], Math.max(this.lower[j], v))
    }
  }

  /** dθ_j/dz_j at θ */
  dThetaDz(theta: ArrayLike<number>, j: number): number {
    return this.isLog[j] ? theta[j] : 1
  }

  /** Nelder–Mead's unconstrained coordinate from θ (kept off the flat ends of sin²). */
  toW(theta: ArrayLike<number>, w: Float64Array | number[]): void {
    for (let j = 0; j < this.n; j++) {
      const z = this.isLog[j] ? Math.log(theta[j]) : theta[j]
      const f = Math.min(0.99, Math.max(0.01, (z - this.zLo[j]) / (this.zHi[j] - this.zLo[j])))
      w[j] = Math.asin(Math.sqrt(f))
    }
  }

  fromW(w: ArrayLike<number>, theta: Float64Array): void {
    for (let j = 0; j < this.n; j++) {
      const s = Math.sin(w[j])
      const z = this.zLo[j] + (this.zHi[j] - this.zLo[j]) * s * s
      theta[j] = Math.min(this.upper[j], Math.max(this.lower[j], this.isLog[j] ? Math.exp(z) : z))
    }
  }
}
