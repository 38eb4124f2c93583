/** A problem with the fit's inputs: says what and where (file, row, column, argument). */
export class FitInputError extends Error {
  readonly file: string | null
  readonly row: number | null
  readonly column: string | null
  /** 'argument': a bad option (--set, --bounds, --fix, --free, --local); 'data': the sheet or the data */
  readonly kind: 'argument' | 'data'
  constructor(message: string, where: { file?: string | null; row?: number | null; column?: string | null; kind?: 'argument' | 'data' } = {}) {
    const parts: string[] = []
    if (where.file) parts.push(where.file)
    if (where.row != null) parts.push(`row ${where.row}`)
    if (where.column) parts.push(`column '${where.column}'`)
    super(parts.length ? `${parts.join(', ')}: ${message}` : message)
    this.name = 'FitInputError'
    this.file = where.file ?? null
    this.row = where.row ?? null
    this.column = where.column ?? null
    this.kind = where.kind ?? 'data'
  }
}
