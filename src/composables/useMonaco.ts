/**
 * Loads Monaco on demand (a dynamic import, so the first page stays light): the lean editor entry,
 * its features (hover, completion, find …) and the editor worker, all bundled by Vite — nothing
 * comes from a CDN. Registers the sheet language and its quick fixes once.
 */
import { shallowRef } from 'vue'
import type * as Monaco from 'monaco-editor/editor'
import { registerSheetLanguage, SHEET_LANGUAGE } from './sheetLanguage'
import { registerSheetQuickFixes } from './sheetQuickFixes'
import { registerDiagnosticFixes } from './sheetDiagnosticFixes'

export type MonacoApi = typeof Monaco

let loading: Promise<MonacoApi> | null = null

export function loadMonaco(): Promise<MonacoApi> {
  loading ??= (async () => {
    const [monaco, , worker] = await Promise.all([
      import('monaco-editor/editor'),
      import('monaco-editor/features/register.all'),
      import('monaco-editor/editor/editor.worker?worker'),
    ])
    const EditorWorker = worker.default
    // the global is declared by monaco-editor's own typings
    self.MonacoEnvironment = { getWorker: () => new EditorWorker() }
    registerSheetLanguage(monaco)
    registerSheetQuickFixes(monaco, SHEET_LANGUAGE)
    registerDiagnosticFixes(monaco)
    return monaco
  })()
  loading.catch(() => { loading = null })
  return loading
}

/** `const { monaco, error } = useMonaco()`; both fill in once the editor has loaded. */
export function useMonaco() {
  const monaco = shallowRef<MonacoApi | null>(null)
  const error = shallowRef<Error | null>(null)
  const ready = loadMonaco().then((m) => { monaco.value = m; return m }, (e: unknown) => { error.value = e instanceof Error ? e : new Error(String(e)); throw e })
  return { monaco, error, ready }
}
