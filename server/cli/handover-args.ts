/**
 * Options shared by `pewter linearize` and `pewter export`: the sheet, parameter overrides, constant
 * inputs, where to linearise, and an optional fit result (`pewter fit --json` output) whose shared
 * estimates and covariance are applied.
 */
import { readFile } from 'node:fs/promises'
import { basename } from 'node:path'
import { compileModel, parseModel, SheetError, type CompiledModel, type ParsedModel } from '../../shared/sheet/index'
import { fitResult, type FitResult } from '../../shared/api/fit'
import { ArgError, namedNumberArg, numberArg, oneSheetFile, textArg, walkArgs } from './args'

export interface HandoverArgs {
  sheet: string
  set: Record<string, number>
  inputs: Record<string, number>
  at: 'steady' | number
  fit: string | null
  json: boolean
  frequencies: number
  format: string | null
  out: string | null
}

export function parseHandoverArgs(args: string[], withExport: boolean): HandoverArgs {
  const o: HandoverArgs = { sheet: '', set: {}, inputs: {}, at: 'steady', fit: null, json: false, frequencies: 50, format: null, out: null }
  let atGiven = ''
  const files = walkArgs(args, (flag, next, a) => {
    switch (flag) {
      case '--set': { const [k, v] = namedNumberArg('--set', next()); o.set[k] = v; return true }
      case '--input': { const [k, v] = namedNumberArg('--input', next()); o.inputs[k] = v; return true }
      case '--at-steady':
        if (atGiven === '--t') throw new ArgError('give either --at-steady or --t, not both')
        atGiven = flag
        o.at = 'steady'
        return true
      case '--t': {
        if (atGiven === '--at-steady') throw new ArgError('give either --at-steady or --t, not both')
        atGiven = flag
        const t = numberArg('--t', next())
        if (t < 0) throw new ArgError(`--t must be >= 0, got ${t}`)
        o.at = t
        return true
      }
      case '--fit': o.fit = textArg('--fit', next(), 'the JSON file written by `pewter fit --json`'); return true
      case '--frequencies': {
        const n = numberArg('--frequencies', next())
        if (!Number.isInteger(n) || n < 0 || n > 2000) throw new ArgError(`--frequencies must be an integer in 0..2000, got ${n}`)
        o.frequencies = n
        return true
      }
      case '--json':
        if (withExport) throw new ArgError(`unknown option '${a}'`)
        o.json = true
        return true
      case '--format':
        if (!withExport) throw new ArgError(`unknown option '${a}'`)
        o.format = next() ?? null
        return true
      case '--out':
        if (!withExport) throw new ArgError(`unknown option '${a}'`)
        o.out = next() ?? null
        return true
      default:
        return false
    }
  })
  o.sheet = oneSheetFile(files)
  return o
}

export interface LoadedSheet {
  text: string
  parsed: ParsedModel
  model: CompiledModel
  fit: FitResult | null
  label: string
}

/** Reads the sheet (and fit file). Throws ArgError for unreadable files, SheetError for a bad sheet. */
export async function loadSheet(o: HandoverArgs): Promise<LoadedSheet> {
  let text: string
  try {
    text = await readFile(o.sheet, 'utf8')
  } catch (e) {
    throw new ArgError(`cannot read ${o.sheet}: ${e instanceof Error ? e.message : String(e)}`)
  }
  const r = parseModel(text)
  if (!r.model) throw new SheetError(r.diagnostics)
  const model = compileModel(r.model)
  let fit: FitResult | null = null
  if (o.fit) {
    let raw: unknown
    try {
      raw = JSON.parse(await readFile(o.fit, 'utf8'))
    } catch (e) {
      throw new ArgError(`cannot read the fit result ${o.fit}: ${e instanceof Error ? e.message : String(e)}`)
    }
    const parsed = fitResult.safeParse(raw)
    if (!parsed.success) {
      const first = parsed.error.issues[0]
      throw new ArgError(`${o.fit} is not a fit result (at ${first.path.join('.') || 'top level'}: ${first.message})`)
    }
    fit = parsed.data
  }
  return { text, parsed: r.model, model, fit, label: `sheet file ${basename(o.sheet)}` }
}
