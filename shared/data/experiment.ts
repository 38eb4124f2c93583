/**
 * From a parsed CSV table to a fit experiment for a compiled sheet: columns named like the sheet's
 * outputs are measurements, columns named like its inputs are input traces, others are ignored (and
 * listed in a warning). Units: a header unit is converted to the sheet's declared unit with mathjs, then
 * to the engine's internal unit (internal = declared·scale + offset); without a header unit the values
 * are taken in the declared unit. Time: seconds from the table → the sheet's time unit.
 */
import type { CompiledModel, UnitMap } from '../sheet/compiled'
import type { ExperimentData, InputTrace } from './traces'
import { CsvError, type CsvTable } from './csv'
import { unitConversion } from './units'

export interface ExperimentOptions {
  name: string
  source?: string
  t0?: number
}

export interface BuiltExperiment {
  experiment: ExperimentData
  warnings: string[]
}

export function experimentFromTable(table: CsvTable, model: CompiledModel, opts: ExperimentOptions): BuiltExperiment {
  const file = opts.source ?? opts.name
  const warnings = table.warnings.map((w) => `${file}: ${w}`)
  const time = new Float64Array(table.time.values.length)
  const spu = model.secondsPerTimeUnit
  for (let k = 0; k < time.length; k++) time[k] = table.time.values[k] / spu
  const outputs: Record<string, Float64Array> = {}
  const inputs: Record<string, InputTrace> = {}
  const ignored: string[] = []
  const toInternal = (col: { name: string; unit: string; values: Float64Array }, sym: UnitMap & { name: string }): Float64Array => {
    let a = 1
    let b = 0
    if (col.unit !== '') {
      if (sym.unit === '') {
        warnings.push(`${file}: column '${col.name}' has the unit '${col.unit}' but the sheet declares none for '${sym.name}': values taken as they are`)
      } else {
        const c = unitConversion(col.unit, sym.unit)
        if (!c.ok) throw new CsvError({ row: 1, column: `${col.name} [${col.unit}]`, message: `${c.message}: the sheet's '${sym.name}' is in ${sym.unit}` }, file)
        a = c.map.a
        b = c.map.b
      }
    }
    const out = new Float64Array(col.values.length)
    for (let k = 0; k < out.length; k++) out[k] = (a * col.values[k] + b) * sym.scale + sym.offset
    return out
  }
  for (const col of table.columns) {
    const o = model.outputs.find((x) => x.name === col.name)
    const i = model.inputs.find((x) => x.name === col.name)
    if ((o || i) && col.issue) throw new CsvError(col.issue, file)
    if (o) outputs[o.name] = toInternal(col, o)
    else if (i) {
      const v = toInternal(col, i)
      const keep: number[] = []
      for (let k = 0; k < v.length; k++) if (Number.isFinite(v[k])) keep.push(k)
      if (keep.length < v.length) warnings.push(`${file}: input '${i.name}': ${v.length - keep.length} empty cell(s) skipped (the trace is interpolated across them)`)
      inputs[i.name] = { t: Float64Array.from(keep, (k) => time[k]), v: Float64Array.from(keep, (k) => v[k]) }
    } else ignored.push(col.name)
  }
  if (ignored.length > 0) warnings.push(`${file}: column(s) ${ignored.map((c) => `'${c}'`).join(', ')} match no input or output of the sheet and are ignored`)
  if (Object.keys(outputs).length === 0) {
    throw new CsvError({ row: 1, column: null, message: `no output column: name a column like one of the sheet's outputs (${model.outputs.map((o) => o.name).join(', ')})` }, file)
  }
  return { experiment: { name: opts.name, source: file, time, outputs, inputs, t0: opts.t0, rows: table.rows }, warnings }
}
