/**
 * Options shared by `pewter linearize` and `pewter export`: the sheet, parameter overrides, constant
 * inputs, where to linearise, and an optional fit result (`pewter fit --json` output) whose shared
 * estimates and covariance are applied.
 */
import { readFile } from 'node:fs/promises'
import { basename } from 'node:path'
import { compileModel, parseModel, SheetError, type CompiledModel, type ParsedModel } from '../../shared/sheet/index'
import { fitResult, type FitResult } from '../../shared/api/fit'
import { ArgError, splitOption } from './args'

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

function num(flag: string, s: string | undefined): number {
  if (s === undefined || s.trim() === '' || s.startsWith('--')) throw new ArgError(`${flag} needs a number`)
  const v = Number(s)
  if (!Number.isFinite(v)) throw new ArgError(`${flag}: '${s}' is not a number`)
  return v
}

function pair(flag: string, s: string | undefined): [string, number] {
  const m = s ? /^([A-Za-z_][A-Za-z0-9_]*)=(.+)$/.exec(s) : null
  if (!m) throw new ArgError(`${flag} needs name=value, got '${s ?? ''}'`)
  return [m[1], num(`${flag} ${m[1]}`, m[2])]
}

export function parseHandoverArgs(args: string[], withExport: boolean): HandoverArgs {
  const o: HandoverArgs = { sheet: '', set: {}, inputs: {}, at: 'steady', fit: null, json: false, frequencies: 50, format: null, out: null }
  const files: string[] = []
  let atGiven = ''
  for (let i = 0; i < args.length; i++) {
    const a = args[i]
    const { flag, inline } = splitOption(a)
    const next = (): string | undefined => (inline !== undefined ? inline : args[++i])
    switch (flag) {
      case '--': break
      case '--set': { const [k, v] = pair('--set', next()); o.set[k] = v; break }
      case '--input': { const [k, v] = pair('--input', next()); o.inputs[k] = v; break }
      case '--at-steady':
        if (atGiven === '--t') throw new ArgError('give either --at-steady or --t, not both')
        atGiven = flag
        o.at = 'steady'
        break
      case '--t': {
        if (atGiven === '--at-steady') throw new ArgError('give either --at-steady or --t, not both')
        atGiven = flag
        const t = num('--t', next())
        if (t < 0) throw new ArgError(`--t must be >= 0, got ${t}`)
        o.at = t
        break
      }
      case '--fit': {
        const s = next()
        if (!s || s.startsWith('--')) throw new ArgError('--fit needs the JSON file written by `pewter fit --json`')
        o.fit = s
        break
      }
      case '--frequencies': {
        const n = num('--frequencies', next())
        if (!Number.isInteger(n) || n < 0 || n > 2000) throw new ArgError(`--frequencies must be an integer in 0..2000, got ${n}`)
        o.frequencies = n
        break
      }
      case '--json':
        if (withExport) throw new ArgError(`unknown option '${a}'`)
        o.json = true
        break
      case '--format':
        if (!withExport) throw new ArgError(`unknown option '${a}'`)
        o.format = next() ?? null
        break
      case '--out':
        if (!withExport) throw new ArgError(`unknown option '${a}'`)
        o.out = next() ?? null
        break
      default:
        if (a.startsWith('-')) throw new ArgError(`unknown option '${a}'`)
        files.push(a)
    }
  }
  if (files.length !== 1) throw new ArgError(files.length === 0 ? 'no sheet file given' : `expected one sheet file, got ${files.length}`)
  o.sheet = files[0]
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
