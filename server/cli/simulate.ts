/**
 * `pewter simulate <sheet> --t-end T [--t0 t] [--step dt | --at t1,t2,…] [--inputs file.csv]
 *    [--set name=value …] [--solver auto|rk45|odex|stiff] [--rtol r] [--atol a] [--max-steps n]
 *    [--states] [--format csv|json]`
 *
 * Times are in the sheet's time unit; --set values, CSV and JSON values are in each symbol's declared
 * unit (the engine works in internal SI units). --set names a parameter, a state (its initial value)
 * or an input (its value without a trace). CSV output: header `t,<outputs…>[,<states…>]`. JSON:
 * { t, outputs, states, stats: { method, switched, steps, rejected, rhsEvals, jacEvals, luDecomps,
 * elapsedMs }, warnings } and, for a sheet with events, events: [{ t, line, condition }] (every event that
 * fired). Warnings go to stderr as well.
 * Exit 0: done; 1: the sheet has errors or the integration failed; 2: bad arguments or input file.
 */
import { readFile } from 'node:fs/promises'
import { compileModel, type ResolvePart, SheetError } from '../../shared/sheet/index'
import { toDeclared, toInternal, type CompiledModel } from '../../shared/sheet/compiled'
import { simulate } from '../../shared/engine/simulate'
import { SimulationError } from '../../shared/engine/errors'
import type { InputTrace, SimulationRequest, SolverName } from '../../shared/engine/simulate-contract'
import { CsvError, parseCsv } from '../../shared/data/csv'
import { splitNotes } from '../../shared/data/csv-notes'
import { unitConversion } from '../../shared/data/units'
import { ArgError, folderLibrary, namedNumberArg, numberArg, oneSheetFile, textArg, walkArgs } from './args'

interface Options {
  sheet: string
  tEnd: number
  t0: number
  step: number | null
  at: number[] | null
  inputs: string | null
  sets: { name: string; value: number }[]
  solver: SolverName
  rtol: number | undefined
  atol: number | undefined
  maxSteps: number | undefined
  states: boolean
  format: 'csv' | 'json'
  library: ResolvePart | null
}

/** --set's name=value: the name may hold '.', '[' and ']' besides an identifier's characters. */
const SET_NAME = /^([A-Za-z_][A-Za-z0-9_.[\]]*)=(.+)$/

export function parseArgs(args: string[]): Options {
  const o: Partial<Options> & { sets: Options['sets'] } = { sets: [], t0: 0, solver: 'auto', states: false, format: 'csv', step: null, at: null, inputs: null, library: null }
  let tEnd: number | undefined
  const files = walkArgs(args, (flag, next) => {
    switch (flag) {
      case '--t-end': tEnd = numberArg('--t-end', next()); return true
      case '--library': o.library = folderLibrary(textArg('--library', next(), 'a folder')); return true
      case '--t0': o.t0 = numberArg('--t0', next()); return true
      case '--step': o.step = numberArg('--step', next()); return true
      case '--at': o.at = textArg('--at', next(), 'a comma-separated list of times').split(',').map((x) => numberArg('--at', x)); return true
      case '--inputs': o.inputs = textArg('--inputs', next(), 'a CSV file'); return true
      case '--set': {
        const [name, value] = namedNumberArg('--set', next(), SET_NAME)
        o.sets.push({ name, value })
        return true
      }
      case '--solver': {
        const s = next()
        if (s !== 'auto' && s !== 'rk45' && s !== 'odex' && s !== 'stiff') throw new ArgError(`--solver must be auto, rk45, odex or stiff, got '${s ?? ''}'`)
        o.solver = s
        return true
      }
      case '--rtol': o.rtol = numberArg('--rtol', next()); return true
      case '--atol': o.atol = numberArg('--atol', next()); return true
      case '--max-steps': o.maxSteps = numberArg('--max-steps', next()); return true
      case '--states': o.states = true; return true
      case '--format': {
        const s = next()
        if (s !== 'csv' && s !== 'json') throw new ArgError(`--format must be csv or json, got '${s ?? ''}'`)
        o.format = s
        return true
      }
      default:
        return false
    }
  })
  const sheet = oneSheetFile(files)
  if (tEnd === undefined) throw new ArgError('--t-end is required')
  const t0 = o.t0 as number
  if (!(tEnd > t0)) throw new ArgError(`--t-end (${tEnd}) must be after --t0 (${t0})`)
  const step = o.step ?? null
  if (step !== null && o.at !== null) throw new ArgError('give either --step or --at, not both')
  if (step !== null && !(step > 0)) throw new ArgError(`--step must be > 0, got ${step}`)
  if (o.at) {
    for (let i = 0; i < o.at.length; i++) {
      if (o.at[i] < t0 || o.at[i] > tEnd) throw new ArgError(`--at: time ${o.at[i]} is outside [t0, t-end] = [${t0}, ${tEnd}]`)
      if (i > 0 && !(o.at[i] > o.at[i - 1])) throw new ArgError(`--at: times must increase, ${o.at[i]} follows ${o.at[i - 1]}`)
    }
  }
  if (o.rtol !== undefined && !(o.rtol > 0 && o.rtol < 1)) throw new ArgError(`--rtol must be in (0, 1), got ${o.rtol}`)
  if (o.atol !== undefined && !(o.atol > 0)) throw new ArgError(`--atol must be > 0, got ${o.atol}`)
  if (o.maxSteps !== undefined && !(Number.isInteger(o.maxSteps) && o.maxSteps >= 1)) throw new ArgError(`--max-steps must be a positive integer, got ${o.maxSteps}`)
  return { ...(o as Options), sheet, tEnd }
}

function outputTimes(o: Options): Float64Array {
  if (o.at) return Float64Array.from(o.at)
  const dt = o.step ?? (o.tEnd - o.t0) / 100
  const n = Math.floor((o.tEnd - o.t0) / dt + 1e-9)
  const out: number[] = []
  for (let k = 0; k <= n; k++) out.push(o.t0 + k * dt)
  if (o.tEnd - out[out.length - 1] > 1e-9 * dt) out.push(o.tEnd)
  else out[out.length - 1] = Math.min(out[out.length - 1], o.tEnd)
  return Float64Array.from(out)
}


async function readInputs(file: string, model: CompiledModel, warnings: string[]): Promise<(InputTrace | null)[]> {
  let text: string
  try {
    text = await readFile(file, 'utf8')
  } catch (e) {
    throw new ArgError(`cannot read ${file}: ${e instanceof Error ? e.message : String(e)}`)
  }
  let table
  try {
    const body = splitNotes(text)
    table = parseCsv(body.text, { file, rowOffset: body.skippedLines })
  } catch (e) {
    if (e instanceof CsvError) throw new ArgError(e.message)
    throw e
  }
  for (const w of table.warnings) warnings.push(`${file}: ${w}`)
  const traces: (InputTrace | null)[] = model.inputs.map(() => null)
  const spu = model.secondsPerTimeUnit
  const ignored: string[] = []
  for (const col of table.columns) {
    const i = model.inputs.findIndex((x) => x.name === col.name)
    if (i < 0) {
      ignored.push(col.name)
      continue
    }
    const sym = model.inputs[i]
    let a = 1
    let b = 0
    if (col.unit !== '' && sym.unit !== '') {
      const c = unitConversion(col.unit, sym.unit)
      if (!c.ok) throw new ArgError(`${file}, row 1, column '${col.name} [${col.unit}]': ${c.message}: the sheet's '${sym.name}' is in ${sym.unit}`)
      a = c.map.a
      b = c.map.b
    }
    const n = col.values.length
    const v = new Float64Array(n)
    for (let k = 0; k < n; k++) {
      const x = col.values[k]
      if (!Number.isFinite(x)) throw new ArgError(`${file}, row ${table.rows[k]}, column '${col.name}': missing or non-numeric value (an input trace needs a value on every row)`)
      v[k] = toInternal(sym, a * x + b)
    }
    traces[i] = { t: Float64Array.from(table.time.values, (s) => s / spu), v }
  }
  if (ignored.length) warnings.push(`${file}: column(s) ${ignored.map((c) => `'${c}'`).join(', ')} match no input of the sheet and are ignored`)
  return traces
}

export async function run(args: string[]): Promise<number> {
  let o: Options
  try {
    o = parseArgs(args)
  } catch (e) {
    if (e instanceof ArgError) {
      process.stderr.write(`pewter simulate: ${e.message}\n`)
      return 2
    }
    throw e
  }
  let text: string
  try {
    text = await readFile(o.sheet, 'utf8')
  } catch (e) {
    process.stderr.write(`pewter simulate: cannot read ${o.sheet}: ${e instanceof Error ? e.message : String(e)}\n`)
    return 2
  }
  let model: CompiledModel
  try {
    model = compileModel(text, { resolvePart: o.library })
  } catch (e) {
    if (e instanceof SheetError) {
      process.stderr.write(`pewter simulate: ${o.sheet}: ${e.message}\n`)
      return 1
    }
    throw e
  }
  const warnings: string[] = []
  const p = Float64Array.from(model.params, (x) => x.value)
  const x0 = Float64Array.from(model.states, (x) => x.initial)
  let traces: (InputTrace | null)[] = model.inputs.map(() => null)
  const inputValues = model.inputs.map((x) => x.value)
  try {
    for (const s of o.sets) {
      const pi = model.params.findIndex((x) => x.name === s.name)
      const si = model.states.findIndex((x) => x.name === s.name)
      const ui = model.inputs.findIndex((x) => x.name === s.name)
      if (pi >= 0) p[pi] = toInternal(model.params[pi], s.value)
      else if (si >= 0) x0[si] = toInternal(model.states[si], s.value)
      else if (ui >= 0) inputValues[ui] = toInternal(model.inputs[ui], s.value)
      else throw new ArgError(`--set ${s.name}: the sheet has no parameter, state or input named '${s.name}'`)
    }
    if (o.inputs) traces = await readInputs(o.inputs, model, warnings)
  } catch (e) {
    if (e instanceof ArgError) {
      process.stderr.write(`pewter simulate: ${e.message}\n`)
      return 2
    }
    throw e
  }
  // an input set by --set takes that value where it has no trace (a copy: the compiled model is cached)
  if (inputValues.some((v, i) => v !== model.inputs[i].value)) {
    model = { ...model, inputs: model.inputs.map((u, i) => ({ ...u, value: inputValues[i] })) }
  }
  const tOut = outputTimes(o)
  const req: SimulationRequest = { t0: o.t0, tOut, p, x0, inputs: traces, solver: o.solver, rtol: o.rtol, atol: o.atol, maxSteps: o.maxSteps }
  let res
  try {
    res = simulate(model, req)
  } catch (e) {
    if (e instanceof SimulationError) {
      process.stderr.write(`pewter simulate: ${e.message}\n`)
      return 1
    }
    throw e
  }
  const all = [...warnings, ...res.warnings]
  for (const w of all) process.stderr.write(`pewter simulate: warning: ${w}\n`)
  const { nx, ny } = model
  const nt = tOut.length
  if (o.format === 'json') {
    const outputs: Record<string, number[]> = {}
    model.outputs.forEach((out, i) => { outputs[out.name] = Array.from({ length: nt }, (_, k) => toDeclared(out, res.y[k * ny + i])) })
    const states: Record<string, number[]> = {}
    model.states.forEach((st, i) => { states[st.name] = Array.from({ length: nt }, (_, k) => toDeclared(st, res.x[k * nx + i])) })
    const s = res.stats
    process.stdout.write(JSON.stringify({
      t: Array.from(res.t), outputs, states,
      stats: { method: s.method, switched: s.switched, steps: s.steps, rejected: s.rejected, rhsEvals: s.rhsEvals, jacEvals: s.jacEvals, luDecomps: s.luDecomps, elapsedMs: s.elapsedMs },
      warnings: all,
      ...(res.events ? { events: res.events.map((e) => ({ t: e.t, line: e.line, condition: model.events[e.event].text })) } : {}),
    }) + '\n')
    return 0
  }
  const header = ['t', ...model.outputs.map((x) => x.name), ...(o.states ? model.states.map((x) => x.name) : [])]
  const lines: string[] = [header.join(',')]
  for (let k = 0; k < nt; k++) {
    const row: number[] = [res.t[k]]
    for (let i = 0; i < ny; i++) row.push(toDeclared(model.outputs[i], res.y[k * ny + i]))
    if (o.states) for (let i = 0; i < nx; i++) row.push(toDeclared(model.states[i], res.x[k * nx + i]))
    lines.push(row.map((v) => String(v)).join(','))
  }
  process.stdout.write(lines.join('\n') + '\n')
  return 0
}
