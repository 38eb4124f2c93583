/**
 * The one obvious repair of a problem: replace the text at `range` (one line) by `text`. The editor
 * offers it as a quick fix; `title` says what it does.
 */
export interface DiagnosticFix {
  title: string
  range: Span
  text: string
}

/** A message about a place in a sheet. Lines and columns are 1-based; endColumn is exclusive. */
export interface Diagnostic {
  line: number
  column: number
  endColumn: number
  severity: 'error' | 'warning'
  message: string
  fix?: DiagnosticFix
}

/** A place on one line of the sheet (1-based columns, end exclusive). */
export interface Span {
  line: number
  column: number
  endColumn: number
}

export class DiagnosticList {
  readonly items: Diagnostic[] = []
  error(span: Span, message: string, fix?: DiagnosticFix | null): void {
    this.add(span, 'error', message, fix)
  }
  warning(span: Span, message: string, fix?: DiagnosticFix | null): void {
    this.add(span, 'warning', message, fix)
  }
  private add(span: Span, severity: Diagnostic['severity'], message: string, fix: DiagnosticFix | null | undefined): void {
    const d: Diagnostic = { line: span.line, column: span.column, endColumn: Math.max(span.endColumn, span.column + 1), severity, message }
    if (fix) d.fix = fix
    this.items.push(d)
  }
  get hasErrors(): boolean {
    return this.items.some((d) => d.severity === 'error')
  }
  sorted(): Diagnostic[] {
    return [...this.items].sort((a, b) => a.line - b.line || a.column - b.column)
  }
}

/** A fix that replaces the text at `span` by `text`. */
export function replaceFix(span: Span, text: string, title = `Change to '${text}'`): DiagnosticFix {
  return { title, range: { line: span.line, column: span.column, endColumn: span.endColumn }, text }
}

/** Thrown by compileModel when the sheet has errors. */
export class SheetError extends Error {
  constructor(readonly diagnostics: Diagnostic[]) {
    const first = diagnostics.find((d) => d.severity === 'error')
    super(first ? `line ${first.line}, column ${first.column}: ${first.message}` : 'the sheet has errors')
    this.name = 'SheetError'
  }
}
