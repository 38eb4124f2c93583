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
import { flattenSheet, mapDiagnostics, type FlattenResult, type ResolvePart, usesParts } from './parts'
import { emptySummary, type SheetSummary, summarize } from './summary'

export { flattenSheet, loadParts, loadPartTexts, partRefs, partsResolver, repinParts, usesParts, type PartRef, type ResolvePart } from './parts'

/** Where a sheet's parts come from (see parts.ts); without it a sheet with parts is an error. */
export interface SheetOptions {
  resolvePart?: ResolvePart | null
}

export { derivativeName, rewriteOlderDerivatives, rewriteOlderLine } from './leibniz'
export type { Diagnostic } from './diagnostics'
export { SheetError } from './diagnostics'
export type { ParsedModel } from './model'
export type { SheetSummary } from './summary'
export type * from './compiled'

export interface ParseModelResult {
  model: ParsedModel | null
  diagnostics: Diagnostic[]
}

export function parseModel(text: string, opts: SheetOptions = {}): ParseModelResult {
  return parseFlat(text, opts).result
}

/** Parse a sheet, flattening its parts first; `flat` is null for a sheet without parts. */
export function parseFlat(text: string, opts: SheetOptions = {}): { result: ParseModelResult; flat: FlattenResult | null } {
  if (typeof text !== 'string' || (!usesParts(text) && !/^\s*feed\b/m.test(text))) return { result: parseSheet(text), flat: null }
  const f = flattenSheet(text, opts.resolvePart ?? null)
  if (f.diagnostics.some((d) => d.severity === 'error')) return { result: { model: null, diagnostics: mapDiagnostics(f, []) }, flat: f }
  const r = parseSheet(f.text, { qualified: true })
  const diagnostics = mapDiagnostics(f, r.diagnostics)
  if (!r.model || diagnostics.some((d) => d.severity === 'error')) return { result: { model: null, diagnostics }, flat: f }
  const model: ParsedModel = { ...r.model, parts: f.direct, partsUsed: f.used }
  return { result: { model, diagnostics }, flat: f }
}

export interface CheckResult {
  ok: boolean
  diagnostics: Diagnostic[]
  summary: SheetSummary
}

export function checkModel(text: string, opts: SheetOptions = {}): CheckResult {
  const { result: r, flat } = parseFlat(text, opts)
  const ok = r.model !== null && !r.diagnostics.some((d) => d.severity === 'error')
  if (!r.model) return { ok, diagnostics: r.diagnostics, summary: emptySummary() }
  const summary = summarize(r.model)
  if (flat) {
    // a part's symbols are placed at its part line
    const at = (line: number) => flat.origin(line)?.line ?? line
    for (const list of [summary.states, summary.parameters, summary.inputs, summary.outputs, summary.consts, summary.lookups, summary.modes, summary.events]) for (const x of list) x.line = at(x.line)
  }
  return { ok, diagnostics: r.diagnostics, summary }
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
export function compileModel(input: string | ParsedModel, opts: SheetOptions = {}): CompiledModel {
  let model: ParsedModel
  if (typeof input === 'string') {
    const cached = cache.get(hashText(input))
    if (cached) return remember(cached)
    const r = parseModel(input, opts)
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

export function tryCompileModel(text: string, opts: SheetOptions = {}): TryCompileResult {
  const r = parseModel(text, opts)
  if (!r.model) return { compiled: null, diagnostics: r.diagnostics }
  try {
    return { compiled: compileModel(r.model), diagnostics: r.diagnostics }
  } catch (e) {
    if (e instanceof SheetError) return { compiled: null, diagnostics: [...r.diagnostics, ...e.diagnostics] }
    return { compiled: null, diagnostics: [...r.diagnostics, { line: 1, column: 1, endColumn: 2, severity: 'error', message: `internal error while compiling: ${e instanceof Error ? e.message : String(e)}` }] }
  }
}

/** The flat text of a sheet with parts (the sheet itself when it has none), or null with the problems. */
export function flatText(text: string, opts: SheetOptions = {}): { text: string | null; diagnostics: Diagnostic[] } {
  const { result, flat } = parseFlat(text, opts)
  if (!result.model) return { text: null, diagnostics: result.diagnostics }
  return { text: flat ? flat.text : text, diagnostics: result.diagnostics }
}
