/**
 * Quick fixes of the sheet editor (Monaco code actions, the light bulb or Ctrl+.). Each entry of
 * SHEET_QUICK_FIXES turns the diagnostics under the cursor into fixes: plain line rewrites, so a
 * fix can be checked without Monaco; registerSheetQuickFixes adapts them to Monaco's code actions.
 */
import type * as Monaco from 'monaco-editor/editor'
import { rewriteOlderLine } from '@shared/sheet/leibniz'

/** A diagnostic as the editor shows it (a Monaco marker of the sheet check). */
export interface FixMarker { line: number; column: number; endColumn: number; message: string; severity: 'error' | 'warning' }
/** Whole lines replaced (1-based line numbers). */
export interface LineFix { title: string; preferred: boolean; lines: { line: number; text: string }[]; markers: FixMarker[] }
export interface FixContext {
  /** the markers at the place the fixes are asked for */
  here: FixMarker[]
  /** every marker of the sheet */
  all: FixMarker[]
  lineText(line: number): string
}
export type QuickFixProvider = (ctx: FixContext) => LineFix[]

const OLDER_FORM = /is the older form$/

/** `h' = …` (with its warning): rewrite this line as dh/dt = …, or every such line of the sheet. */
export const olderDerivativeFixes: QuickFixProvider = (ctx) => {
  const older = (m: FixMarker) => m.severity === 'warning' && OLDER_FORM.test(m.message)
  const rewrite = (m: FixMarker) => {
    const text = rewriteOlderLine(ctx.lineText(m.line))
    return text === null ? null : { line: m.line, text }
  }
  const out: LineFix[] = []
  for (const m of ctx.here.filter(older)) {
    const r = rewrite(m)
    if (r) out.push({ title: `Rewrite as ${r.text.trim().split('=')[0].trim()} = …`, preferred: true, lines: [r], markers: [m] })
  }
  if (!out.length) return out
  const every = ctx.all.filter(older)
  const lines = [...new Map(every.map((m) => [m.line, rewrite(m)])).values()].filter((x): x is { line: number; text: string } => x !== null)
  if (lines.length > 1) out.push({ title: `Rewrite all ${lines.length} x' lines as dx/dt`, preferred: false, lines, markers: every })
  return out
}

/** The quick fixes of the sheet language, asked in this order. */
export const SHEET_QUICK_FIXES: QuickFixProvider[] = [olderDerivativeFixes]

/** the owner of the sheet check's markers (SheetEditor sets them) */
export const SHEET_MARKER_OWNER = 'pewter-sheet'

let registered = false

/** Register the quick fixes for `language`, over the markers of the sheet check (once per page). */
export function registerSheetQuickFixes(monaco: typeof Monaco, language: string, owner = SHEET_MARKER_OWNER): void {
  if (registered) return
  registered = true
  const toFix = (m: Monaco.editor.IMarkerData): FixMarker => ({
    line: m.startLineNumber, column: m.startColumn, endColumn: m.endColumn, message: m.message,
    severity: m.severity === monaco.MarkerSeverity.Error ? 'error' : 'warning',
  })
  monaco.languages.registerCodeActionProvider(language, {
    provideCodeActions(model, _range, context) {
      const all = monaco.editor.getModelMarkers({ resource: model.uri, owner })
      const ctx: FixContext = { here: context.markers.map(toFix), all: all.map(toFix), lineText: (n) => model.getLineContent(n) }
      const actions: Monaco.languages.CodeAction[] = SHEET_QUICK_FIXES.flatMap((p) => p(ctx)).map((f) => ({
        title: f.title,
        kind: 'quickfix',
        isPreferred: f.preferred,
        diagnostics: all.filter((m) => f.markers.some((x) => x.line === m.startLineNumber && x.message === m.message)),
        edit: {
          edits: f.lines.map((l) => ({
            resource: model.uri,
            versionId: model.getVersionId(),
            textEdit: { range: new monaco.Range(l.line, 1, l.line, model.getLineMaxColumn(l.line)), text: l.text },
          })),
        },
      }))
      return { actions, dispose() {} }
    },
  }, { providedCodeActionKinds: ['quickfix'] })
}
