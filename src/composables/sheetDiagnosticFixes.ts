/**
 * Quick fixes in the sheet editor: Monaco code actions that apply the `fix` a diagnostic carries
 * (range and replacement text, worked out by the shared checker — the editor only applies it).
 * SheetEditor records each check's diagnostics here with the text version they belong to; a
 * marker of an older text offers nothing until the next check.
 */
import type * as Monaco from 'monaco-editor/editor'
import type { DiagnosticDto } from '@shared/api/models'
import { SHEET_LANGUAGE } from './sheetLanguage'

interface Checked { version: number; diagnostics: DiagnosticDto[] }

/** The latest check of each open sheet, by the Monaco model's URI (set by SheetEditor). */
export const sheetDiagnostics = new Map<string, Checked>()

interface MarkerLike { startLineNumber: number; startColumn: number; message: string }

/** The diagnostics with a fix that the given markers stand for (same line, start column and message). */
export function fixableDiagnostics(diagnostics: DiagnosticDto[], markers: readonly MarkerLike[]): { marker: MarkerLike; diagnostic: DiagnosticDto }[] {
  const out: { marker: MarkerLike; diagnostic: DiagnosticDto }[] = []
  for (const marker of markers) {
    const diagnostic = diagnostics.find((d) => d.fix && d.line === marker.startLineNumber && d.column === marker.startColumn && d.message === marker.message)
    if (diagnostic) out.push({ marker, diagnostic })
  }
  return out
}

let registered = false

export function registerDiagnosticFixes(monaco: typeof Monaco): void {
  if (registered) return
  registered = true
  monaco.languages.registerCodeActionProvider(SHEET_LANGUAGE, {
    provideCodeActions(model, _range, context) {
      const checked = sheetDiagnostics.get(model.uri.toString())
      if (!checked || checked.version !== model.getVersionId()) return { actions: [], dispose() {} }
      const actions: Monaco.languages.CodeAction[] = fixableDiagnostics(checked.diagnostics, context.markers).map(({ marker, diagnostic }) => {
        const { range: r, text, title } = diagnostic.fix!
        return {
          title,
          kind: 'quickfix',
          isPreferred: true,
          diagnostics: [marker as Monaco.editor.IMarkerData],
          edit: { edits: [{ resource: model.uri, versionId: checked.version, textEdit: { range: new monaco.Range(r.line, r.column, r.line, r.endColumn), text } }] },
        }
      })
      return { actions, dispose() {} }
    },
  }, { providedCodeActionKinds: ['quickfix'] })
}
