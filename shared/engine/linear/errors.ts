/** Errors of the linear analysis (operating points, linearisation, eigenvalues, exports). */
export class LinearAlgebraError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'LinearAlgebraError'
  }
}

/** A request the analysis cannot honour (bad names, values, shapes): a caller's mistake, HTTP 400. */
export class AnalysisInputError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'AnalysisInputError'
  }
}
