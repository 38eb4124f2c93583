/** A message about a place in a sheet. Lines and columns are 1-based; endColumn is exclusive. */
export interface Diagnostic {
  line: number
  column: number
  endColumn: number
  severity: 'error' | 'warning'
  message: string
}

/** A place on one line of the sheet (1-based columns, end exclusive). */
export interface Span {
  line: number
  column: number
  endColumn: number
}

export class DiagnosticList {
  readonly items: Diagnostic[] = []
  error(span: Span, message: string): void {
    this.items.push({ line: span.line, column: span.column, endColumn: Math.max(span.endColumn, span.column + 1), severity: 'error', message })
  }
  warning(span: Span, message: string): void {
    this.items.push({ line: span.line, column: span.column, endColumn: Math.max(span.endColumn, span.column + 1), severity: 'warning', message })
  }
  get hasErrors(): boolean {
    return this.items.some((d) => d.severity === 'error')
  }
  sorted(): Diagnostic[] {
    return [...this.items].sort((a, b) => a.line - b.line || a.column - b.column)
  }
}

/** Thrown by compileModel when the sheet has errors. */
export class SheetError extends Error {
  constructor(readonly diagnostics: Diagnostic[]) {
    const first = diagnostics.find((d) => d.severity === 'error')
    super(first ? `line ${first.line}, column ${first.column}: ${first.message}` : 'the sheet has errors')
    this.name = 'SheetError'
  }
}
