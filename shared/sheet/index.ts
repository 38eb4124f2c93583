/**
 * Pewter's model-sheet language: parse, check and compile a sheet.
 *   parseModel(text)   → { model | null, diagnostics }
 *   checkModel(text)   → { ok, diagnostics, summary }
 *   compileModel(text | model) → CompiledModel (cached by the hash of the text); throws SheetError
 *   tryCompileModel(text) → { compiled | null, diagnostics } (never throws)
 * See docs/sheets.md for the language.
 */
import { buildCompiled } from './compile'
import type { CompiledModel } from './compiled'
import { type Diagnostic, SheetError } from './diagnostics'
import type { ParsedModel } from './model'
import { hashText } from './hash'
import { parseSheet } from './parser'
import { emptySummary, type SheetSummary, summarize } from './summary'

export type { Diagnostic } from './diagnostics'
export { SheetError } from './diagnostics'
export type { ParsedModel } from './model'
export type { SheetSummary } from './summary'
export type * from './compiled'

export interface ParseModelResult {
  model: ParsedModel | null
  diagnostics: Diagnostic[]
}

export function parseModel(text: string): ParseModelResult {
  return parseSheet(text)
}

export interface CheckResult {
  ok: boolean
  diagnostics: Diagnostic[]
  summary: SheetSummary
}

export function checkModel(text: string): CheckResult {
  const r = parseSheet(text)
  const ok = r.model !== null && !r.diagnostics.some((d) => d.severity === 'error')
  return { ok, diagnostics: r.diagnostics, summary: r.model ? summarize(r.model) : emptySummary() }
}

const CACHE_SIZE = 64
const cache = new Map<string, CompiledModel>()

function remember(c: CompiledModel): CompiledModel {
  cache.delete(c.hash)
  cache.set(c.hash, c)
  while (cache.size > CACHE_SIZE) cache.delete(cache.keys().next().value as string)
  return c
}

/** Compile a sheet (text or a parsed model). Throws SheetError when the sheet has errors. */
export function compileModel(input: string | ParsedModel): CompiledModel {
  let model: ParsedModel
  if (typeof input === 'string') {
    const cached = cache.get(hashText(input))
    if (cached) return remember(cached)
    const r = parseSheet(input)
    if (!r.model) throw new SheetError(r.diagnostics)
    model = r.model
  } else {
    model = input
  }
  const hit = cache.get(model.hash)
  if (hit) return remember(hit)
  return remember(buildCompiled(model))
}

export interface TryCompileResult {
  compiled: CompiledModel | null
  diagnostics: Diagnostic[]
}

export function tryCompileModel(text: string): TryCompileResult {
  const r = parseSheet(text)
  if (!r.model) return { compiled: null, diagnostics: r.diagnostics }
  try {
    return { compiled: compileModel(r.model), diagnostics: r.diagnostics }
  } catch (e) {
    if (e instanceof SheetError) return { compiled: null, diagnostics: [...r.diagnostics, ...e.diagnostics] }
    return { compiled: null, diagnostics: [...r.diagnostics, { line: 1, column: 1, endColumn: 2, severity: 'error', message: `internal error while compiling: ${e instanceof Error ? e.message : String(e)}` }] }
  }
}
