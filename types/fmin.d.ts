// Typings for the part of fmin 0.0.4 that Pewter uses (the package ships none).
declare module 'fmin/index.js' {
  export interface NelderMeadParameters {
    maxIterations?: number
    nonZeroDelta?: number
    zeroDelta?: number
    minErrorDelta?: number
    minTolerance?: number
    rho?: number
    chi?: number
    psi?: number
    sigma?: number
    history?: unknown[]
  }
  export interface NelderMeadResult {
    fx: number
    x: number[]
  }
  export function nelderMead(f: (x: number[]) => number, x0: number[], parameters?: NelderMeadParameters): NelderMeadResult
}
