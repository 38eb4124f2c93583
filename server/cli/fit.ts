/**
 * `pewter fit <sheet> <data.csv>… [options]`: estimate a sheet's free parameters from measured traces.
 * Exit codes: 0 a result (converged or stopped with an estimate), 1 a failed fit or bad data, 2 bad arguments.
 */
import { readFile } from 'node:fs/promises'
import { basename } from 'node:path'
import { compileModel, type ResolvePart, SheetError } from '../../shared/sheet'
import type { CompiledModel } from '../../shared/sheet'
import { runFit, FitInputError, type FitOptions, type ProblemSpec, type ExperimentData } from '../../shared/engine/fit'
import { parseCsv, CsvError } from '../../shared/data/csv'
import { splitNotes } from '../../shared/data/csv-notes'
import { experimentFromTable } from '../../shared/data/experiment'
import { describeOutcome, type FitResult, type EstimateRow } from '../../shared/api/fit'
import { ArgError, folderLibrary, splitOption } from './args'
import { segmentHelpers, segmentThreadsOption } from '../jobs/segment-threads'
import { formatP, residualVerdicts } from '../../shared/api/residual-checks'

const USAGE = `usage: pewter fit <sheet> <data.csv>… [--validate v.csv] [--method lm|nelder-mead] [--starts N]
  [--weighting sheet|equal|normalized|ml] [--set name=value …] [--fix a,b] [--free c,d] [--bounds c=lo:hi]
  [--per-record k] [--t0 t] [--rtol r] [--atol a] [--seed n] [--profile name] [--landscape a,b[,n]]
  [--equation-error compare|start] [--time-budget ms] [--solver auto|rk45|odex|stiff] [--max-iterations n] [--library DIR]
  [--validation-start sheet|estimate] [--segments N | --segment-length T] [--threads N] [--json]
  --segments N, --segment-length T: multiple shooting, each record cut into N segments (or segments of
  about T in the sheet's time unit), then a single-shooting polish; --threads N: threads evaluating the
  segments, the fit's own included (default min(segments, cores − 1); 1 = the fit's thread alone)
  --per-record k: estimate parameter k once per record (data file) instead of once for all (--local is the older name)`

interface Args {
  sheet: string
  data: string[]
  validate: string[]
  validationStart?: 'sheet' | 'estimate'
  json: boolean
  set: [string, number][]
  fix: string[]
  free: string[]
  bounds: [string, number, number][]
  local: string[]
  t0?: number
  opts: FitOptions
  weighting: ProblemSpec['weighting']
  library: ResolvePart | null
  /** threads for the segments of multiple shooting; null: the default */
  threads: number | null
}

function number(flag: string, v: string): number {
  const x = Number(v)
  if (v.trim() === '' || !Number.isFinite(x)) throw new ArgError(`${flag}: '${v}' is not a number`)
  return x
}

function list(v: string): string[] {
  return v.split(',').map((s) => s.trim()).filter(Boolean)
}

export function parseArgs(argv: string[]): Args {
  const pos: string[] = []
  const a: Args = { sheet: '', data: [], validate: [], json: false, set: [], fix: [], free: [], bounds: [], local: [], opts: {}, weighting: undefined, library: null, threads: null }
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]
    if (!arg.startsWith('--')) {
      pos.push(arg)
      continue
    }
    const { flag, inline } = splitOption(arg)
    if (flag === '--json') {
      a.json = true
      continue
    }
    const value = (): string => {
      if (inline !== undefined) return inline
      const v = argv[++i]
      if (v === undefined || v.startsWith('--')) throw new ArgError(`${flag} needs a value`)
      return v
    }
    switch (flag) {
      case '--validate': a.validate.push(value()); break
      case '--library': a.library = folderLibrary(value()); break
      case '--method': {
        const m = value()
        if (m !== 'lm' && m !== 'nelder-mead') throw new ArgError(`--method: '${m}' is not lm or nelder-mead`)
        a.opts.method = m
        break
      }
      case '--starts': {
        const n = number(flag, value())
        if (!Number.isInteger(n) || n < 1 || n > 10001) throw new ArgError('--starts: a whole number from 1 to 10001 (the starts in all, the sheet\'s values among them)')
        // N starts in all, as the run form's Starts and `pewter submit --starts`: the sheet's values and N − 1 Latin-hypercube points
        a.opts.starts = n - 1
        break
      }
      case '--weighting': {
        const w = value()
        if (!['sheet', 'equal', 'normalized', 'ml'].includes(w)) throw new ArgError(`--weighting: '${w}' is not sheet, equal, normalized or ml`)
        a.weighting = w as Args['weighting']
        break
      }
      case '--set': {
        for (const item of list(value())) {
          const k = item.indexOf('=')
          if (k <= 0) throw new ArgError(`--set: '${item}' is not name=value`)
          a.set.push([item.slice(0, k).trim(), number(`--set ${item.slice(0, k)}`, item.slice(k + 1))])
        }
        break
      }
      case '--fix': a.fix.push(...list(value())); break
      case '--free': a.free.push(...list(value())); break
      case '--per-record':
      case '--local': a.local.push(...list(value())); break
      case '--bounds': {
        for (const item of list(value())) {
          const m = /^([^=]+)=([^:]+):(.+)$/.exec(item)
          if (!m) throw new ArgError(`--bounds: '${item}' is not name=lo:hi`)
          const lo = number(`--bounds ${m[1]}`, m[2])
          const hi = number(`--bounds ${m[1]}`, m[3])
          if (!(lo < hi)) throw new ArgError(`--bounds ${m[1]}: the lower bound (${lo}) must be below the upper bound (${hi})`)
          a.bounds.push([m[1].trim(), lo, hi])
        }
        break
      }
      case '--t0': a.t0 = number(flag, value()); break
      case '--rtol': {
        const r = number(flag, value())
        if (!(r > 0 && r < 1)) throw new ArgError('--rtol must lie in (0, 1)')
        a.opts.rtol = r
        break
      }
      case '--atol': {
        const r = number(flag, value())
        if (!(r > 0)) throw new ArgError('--atol must be positive')
        a.opts.atol = r
        break
      }
      case '--seed': a.opts.seed = number(flag, value()); break
      case '--profile': (a.opts.profile ??= []).push(...list(value())); break
      case '--landscape': {
        const parts = list(value())
        if (parts.length < 2 || parts.length > 3) throw new ArgError('--landscape: give two estimated names and an optional grid size, e.g. b1,b2,41')
        a.opts.landscape = { x: parts[0], y: parts[1], n: parts[2] ? number('--landscape', parts[2]) : undefined }
        break
      }
      case '--equation-error': {
        const v = value()
        if (v !== 'compare' && v !== 'start') throw new ArgError("--equation-error: 'compare' or 'start'")
        a.opts.equationError = v
        break
      }
      case '--segments': {
        const n = number(flag, value())
        if (!Number.isInteger(n) || n < 1 || n > 10000) throw new ArgError('--segments: a whole number from 1 to 10000')
        if (a.opts.segments?.segmentLength !== undefined) throw new ArgError('give --segments or --segment-length, not both')
        a.opts.segments = { segments: n }
        break
      }
      case '--segment-length': {
        const t = number(flag, value())
        if (!(t > 0)) throw new ArgError("--segment-length: a positive time in the sheet's time unit")
        if (a.opts.segments?.segments !== undefined) throw new ArgError('give --segments or --segment-length, not both')
        a.opts.segments = { segmentLength: t }
        break
      }
      case '--threads': {
        try {
          a.threads = segmentThreadsOption(value(), '--threads')
        } catch (e) {
          throw new ArgError(e instanceof Error ? e.message : String(e))
        }
        break
      }
      case '--time-budget': a.opts.timeBudgetMs = number(flag, value()); break
      case '--max-iterations': a.opts.maxIterations = number(flag, value()); break
      case '--validation-start': {
        const v = value()
        if (v !== 'sheet' && v !== 'estimate') throw new ArgError(`--validation-start: '${v}' is not sheet or estimate`)
        a.validationStart = v
        break
      }
      case '--solver': {
        const s = value()
        if (!['auto', 'rk45', 'odex', 'stiff'].includes(s)) throw new ArgError(`--solver: '${s}' is not auto, rk45, odex or stiff`)
        a.opts.solver = s as FitOptions['solver']
        break
      }
      default: throw new ArgError(`unknown option ${flag}`)
    }
  }
  if (pos.length < 2) throw new ArgError('give a sheet file and at least one data file')
  a.sheet = pos[0]
  a.data = pos.slice(1)
  return a
}

async function readText(path: string): Promise<string> {
  try {
    return await readFile(path, 'utf8')
  } catch (e) {
    throw new ArgError(`cannot read ${path}: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`)
  }
}

function findSymbol(model: CompiledModel, name: string) {
  return model.params.find((p) => p.name === name) ?? model.states.find((s) => s.name === name) ?? null
}

export async function run(argv: string[]): Promise<number> {
  let args: Args
  let model: CompiledModel
  const texts = new Map<string, string>()
  try {
    args = parseArgs(argv)
    for (const f of [args.sheet, ...args.data, ...args.validate]) if (!texts.has(f)) texts.set(f, await readText(f))
  } catch (e) {
    if (e instanceof ArgError) {
      process.stderr.write(`pewter fit: ${e.message}\n${USAGE}\n`)
      return 2
    }
    throw e
  }
  // the part texts the sheet used, for the segment helper threads (they compile the sheet themselves)
  const parts: Record<string, string> = {}
  const library = args.library
  const resolvePart: ResolvePart | null = library && ((h, v) => {
    const t = library(h, v)
    if (t !== null) parts[`${h}@${v}`] = t
    return t
  })
  try {
    model = compileModel(texts.get(args.sheet)!, { resolvePart })
  } catch (e) {
    if (e instanceof SheetError) {
      const errs = e.diagnostics.filter((d) => d.severity === 'error')
      process.stderr.write(errs.map((d) => `${args.sheet}:${d.line}:${d.column}: ${d.message}`).join('\n') + '\n')
      return 1
    }
    throw e
  }
  const cliWarnings: string[] = []
  let spec: ProblemSpec
  try {
    const used = new Map<string, number>()
    const load = (file: string): ExperimentData => {
      // leading `# …` comment lines (notes) are skipped as an upload skips them; rows keep the file's numbers
      const { text, skippedLines } = splitNotes(texts.get(file)!)
      const table = parseCsv(text, { file, strict: false, rowOffset: skippedLines })
      const base = basename(file)
      const k = (used.get(base) ?? 0) + 1
      used.set(base, k)
      const built = experimentFromTable(table, model, { name: k > 1 ? `${base} (${k})` : base, source: file })
      cliWarnings.push(...built.warnings)
      return built.experiment
    }
    const experiments = args.data.map((f) => load(f))
    const validation = args.validate.map((f) => load(f))
    const toInternal = (name: string, v: number): number => {
      const sym = findSymbol(model, name)
      if (!sym) return v // the problem reports the unknown name with a suggestion
      return v * sym.scale + sym.offset
    }
    spec = {
      experiments, validation, weighting: args.weighting, t0: args.t0,
      set: Object.fromEntries(args.set.map(([n, v]) => [n, toInternal(n, v)])),
      bounds: Object.fromEntries(args.bounds.map(([n, lo, hi]) => {
        const a = toInternal(n, lo)
        const b = toInternal(n, hi)
        return [n, [Math.min(a, b), Math.max(a, b)]]
      })),
      fix: args.fix, free: args.free, local: args.local, validationStart: args.validationStart,
    }
  } catch (e) {
    if (e instanceof CsvError) {
      process.stderr.write(`pewter fit: ${e.message}\n`)
      return 1
    }
    throw e
  }
  let result: FitResult
  const segments = args.opts.segments
  if (segments) {
    const { rtol, atol, solver, maxSteps } = args.opts
    args.opts.segmentEvaluator = segmentHelpers().factory({ sheet: texts.get(args.sheet)!, parts, spec, options: { rtol, atol, solver, maxSteps }, segments }, args.threads)
  }
  try {
    result = await runFit(model, spec, args.opts)
  } catch (e) {
    if (e instanceof FitInputError) {
      process.stderr.write(`pewter fit: ${e.message}\n`)
      return e.kind === 'argument' ? 2 : 1
    }
    throw e
  } finally {
    if (segments) await segmentHelpers().close()
  }
  result.warnings = [...cliWarnings, ...result.warnings]
  if (args.json) process.stdout.write(JSON.stringify(result) + '\n')
  else process.stdout.write(formatTable(result))
  // the outcome on stderr whenever it is not a plain convergence, with the engine's own message
  if (result.status === 'failed') {
    process.stderr.write(`pewter fit: failed${result.reasonStart !== null ? ` (start ${result.reasonStart})` : ''}: ${result.reason}\n`)
  } else if (result.status !== 'converged') {
    process.stderr.write(`pewter fit: ${describeOutcome(result.status, result.convergedBy)}: ${result.reason}\n`)
  }
  return result.status === 'failed' ? 1 : 0
}

function g(v: number | null | undefined, digits = 6): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—'
  return Number(v.toPrecision(digits)).toString()
}

function pad(rows: string[][]): string {
  const w = rows[0].map((_, c) => Math.max(...rows.map((r) => r[c].length)))
  return rows.map((r) => r.map((cell, c) => cell.padEnd(w[c])).join('  ').trimEnd()).join('\n') + '\n'
}

function estimateTable(rows: EstimateRow[], title: string): string {
  if (rows.length === 0) return ''
  const body = rows.map((p) => [
    p.experiment === null ? p.name : `${p.name} (per-record, record ${p.experiment + 1})`, g(p.value, 8), p.unit || '-', g(p.stdError, 4),
    `[${g(p.ci95[0])}, ${g(p.ci95[1])}]`, `[${g(p.lower)}, ${g(p.upper)}]`,
    p.atBound ? `at ${p.atBound} bound` : !p.determined ? `not determined by these data${p.profileCi95 ? `; profile [${g(p.profileCi95[0])}, ${g(p.profileCi95[1])}]` : ''}` : p.profileCi95 ? `profile [${g(p.profileCi95[0])}, ${g(p.profileCi95[1])}]` : '',
  ])
  return `\n${title}\n` + pad([['name', 'value', 'unit', 'std error', '95 % interval', 'bounds', ''], ...body])
}

export function formatTable(r: FitResult): string {
  let s = `fit ${describeOutcome(r.status, r.convergedBy)}: ${r.reason}\n`
  s += `weighted SSE ${g(r.sse, 10)}   N ${r.nObservations}   p ${r.nEstimated}   iterations ${r.iterations}   simulations ${r.simulations}   ${g(r.elapsedMs, 4)} ms\n`
  s += `AIC ${g(r.aic)}   BIC ${g(r.bic)}   method ${r.method}   weighting ${r.weighting}\n`
  const ms = r.multipleShooting
  if (ms) {
    s += `multiple shooting: ${ms.segments} segments, ${ms.continuous ? 'continuous' : 'NOT continuous'} (largest scaled defect ${g(ms.defect, 3)}, tolerance ${g(ms.defectTolerance, 2)}), ${ms.penaltyRounds} penalty rounds, ${ms.simulations} segment simulations; cost over the segments ${g(ms.segmentCost, 10)}, in one piece ${g(ms.singleShootingCostAtEstimate, 10)}; then the single-shooting polish\n`
  }
  s += estimateTable(r.parameters, 'parameters')
  s += estimateTable(r.initialStates, 'initial states')
  if (r.outputs.length > 0) {
    s += '\noutputs\n' + pad([['output', 'record', 'set', 'N', 'NRMSE', 'RMSE', 'R²', 'Ljung–Box p'], ...r.outputs.map((o) => [
      o.name, o.experimentName, o.validation ? 'validation' : 'fit', String(o.n), g(o.nrmse, 4), g(o.rmse, 4), g(o.r2, 6),
      o.residuals ? g(o.residuals.ljungBox.pValue, 3) : '—',
    ])])
  }
  const checked = r.outputs.filter((o) => o.residuals)
  if (checked.length > 0) {
    s += '\nresidual checks (5 % level)\n'
    for (const o of checked) {
      s += `  ${o.name} on ${o.experimentName} (${o.validation ? 'validation' : 'fit'})\n`
      s += pad(residualVerdicts(o.residuals!).map((v) => [`    ${v.passed ? 'pass' : 'FAIL'}`, v.check, `p ${formatP(v.pValue)}`, v.statistic]))
    }
  }
  if (r.equationError) {
    s += `\nequation-error (OLS) comparison: ${r.equationError.parameters.map((p) => `${p.name} = ${g(p.value)} ± ${g(p.stdError, 3)}`).join(', ')}; output-error SSE there ${g(r.equationError.sse)}\n`
  }
  if (r.starts.length > 1) s += `\nstarts: ${r.starts.length}, best #${r.bestStart}; costs ${r.starts.map((x) => g(x.sse, 5)).join(', ')}\n`
  if (r.identifiability && r.identifiability.combinations.length > 0) {
    s += '\nidentifiability\n' + r.identifiability.combinations.map((c) => `  - ${c}\n`).join('')
    if (r.identifiability.advice) s += `  - ${r.identifiability.advice}\n`
  }
  if (r.validationStart) {
    s += `\nvalidation started from ${r.validationStart === 'estimated' ? 'initial states estimated on each record (parameters frozen)' : "the sheet's initial state"}\n`
    s += r.validationInitialStates.map((v) => `  ${v.experiment}: ${v.name}(t0) = ${g(v.value)} ${v.unit}\n`).join('')
  }
  if (r.warnings.length > 0) s += '\nwarnings\n' + r.warnings.map((w) => `  - ${w}\n`).join('')
  if (r.notes.length > 0) s += '\ninformation\n' + r.notes.map((w) => `  - ${w}\n`).join('')
  s += '\n' + r.cautions.map((c) => `note: ${c}\n`).join('')
  return s
}
