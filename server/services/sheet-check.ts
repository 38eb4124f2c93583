/**
 * Checks a sheet with the shared parser and returns its diagnostics and the summary stored with a
 * version (states, parameters with units and bounds, inputs, outputs). A diagnostic with one obvious
 * repair carries it as `fix` (range and replacement text). Nothing is saved here.
 */
import { checkModel, type ResolvePart } from '../../shared/sheet'
import { sheetSummary, type CheckReply, type DiagnosticDto } from '../../shared/api/models'

export function checkSheet(text: string, resolvePart: ResolvePart | null = null): CheckReply {
  const r = checkModel(text, { resolvePart })
  // a fix goes with its diagnostic: the editor applies it as a quick fix
  const diagnostics: DiagnosticDto[] = r.diagnostics.map((d) => ({
    line: d.line, column: d.column, endColumn: d.endColumn, severity: d.severity, message: d.message,
    ...(d.fix ? { fix: { title: d.fix.title, range: { ...d.fix.range }, text: d.fix.text } } : {}),
  }))
  // the summary is validated against the stored shape (a drift between the two fails loudly on publish)
  const parsed = sheetSummary.safeParse(r.summary)
  return { ok: r.ok, diagnostics, summary: parsed.success ? parsed.data : null }
}
