/**
 * A column mapping (sheet input/output → dataset column) against a sheet's signals and a dataset's
 * columns, shared by the server's bindings and the browser's quick simulation: the automatic match by
 * name, the check of each bound column (it exists, its unit converts), and a dataset turned into a fit
 * experiment (time in the sheet's unit, values in internal units) exactly as fits read it.
 */
import type { ColumnMapping, MappingCheck } from '../api/datasets'
import { toInternal, type CompiledModel } from '../sheet/compiled'
import type { ExperimentData } from './traces'
import { conversionFor, normName } from './signal-columns'

export interface SignalInfo { name: string; unit: string }
export interface SheetSignals { inputs: SignalInfo[]; outputs: SignalInfo[] }
/** a dataset column as the mapping sees it: its name and the unit of its header ('' when none) */
export interface ColumnUnit { name: string; unit: string }

/** Matches columns to signals by name; an existing mapping's entries win where they name a column. */
export function autoMatch(signals: SheetSignals, columns: string[], base?: ColumnMapping): ColumnMapping {
  const byNorm = new Map(columns.map((c) => [normName(c), c]))
  const pick = (name: string, given: string | null | undefined) => {
    if (given !== undefined) return given
    return byNorm.get(normName(name)) ?? null
  }
  const inputs: Record<string, string | null> = {}
  const outputs: Record<string, string | null> = {}
  for (const i of signals.inputs) inputs[i.name] = pick(i.name, base?.inputs?.[i.name])
  for (const o of signals.outputs) outputs[o.name] = pick(o.name, base?.outputs?.[o.name])
  return { inputs, outputs }
}

/** Checks a mapping against one dataset's columns: every bound column exists and its unit converts. */
export function checkMapping(signals: SheetSignals, mapping: ColumnMapping, columns: ColumnUnit[] | null): MappingCheck[] {
  const byName = new Map((columns ?? []).map((c) => [c.name, c]))
  const out: MappingCheck[] = []
  const one = (kind: 'input' | 'output', s: SignalInfo, column: string | null | undefined) => {
    const col = column ?? null
    const meta = col ? byName.get(col) : undefined
    let problem: string | null = null
    let scale: number | null = null
    let offset: number | null = null
    if (col && columns && !meta) problem = `no column named '${col}' in the dataset (columns: ${columns.map((c) => c.name).join(', ')})`
    else if (col) {
      const r = conversionFor(s.unit, meta?.unit ?? '')
      if ('problem' in r) problem = r.problem
      else { scale = r.conv.scale; offset = r.conv.offset }
    }
    out.push({ kind, signal: s.name, sheetUnit: s.unit, column: col, columnUnit: meta ? meta.unit : null, scale, offset, problem })
  }
  for (const i of signals.inputs) one('input', i, mapping.inputs[i.name])
  for (const o of signals.outputs) one('output', o, mapping.outputs[o.name])
  return out
}

/** A dataset's samples: time in seconds, columns by name (null or NaN where a cell is empty). */
export interface RecordSamples {
  time: ArrayLike<number>
  columns: Record<string, ArrayLike<number | null>>
}

/** A mapped column that is missing, empty or in a unit that does not convert. */
export class RecordMappingError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'RecordMappingError'
  }
}

/**
 * One dataset as a fit experiment: time in the sheet's unit, mapped signals converted to internal units;
 * an input trace skips empty cells (interpolated across), an output keeps NaN there.
 */
export function experimentFromRecord(model: CompiledModel, ds: { name: string; columns: ColumnUnit[]; data: RecordSamples }, mapping: ColumnMapping): ExperimentData {
  const unitOf = new Map(ds.columns.map((c) => [c.name, c.unit]))
  const time = Float64Array.from(ds.data.time, (t) => t / model.secondsPerTimeUnit)
  const column = (kind: string, signal: string, sheetUnit: string, col: string) => {
    const values = ds.data.columns[col]
    if (!values) throw new RecordMappingError(`dataset '${ds.name}': no column '${col}' for ${kind} '${signal}'`)
    const conv = conversionFor(sheetUnit, unitOf.get(col) ?? '')
    if ('problem' in conv) throw new RecordMappingError(`dataset '${ds.name}', column '${col}' for ${kind} '${signal}': ${conv.problem}`)
    return { values, conv: conv.conv }
  }
  const outputs: Record<string, Float64Array> = {}
  for (const o of model.outputs) {
    const col = mapping.outputs[o.name]
    if (!col) continue
    const { values, conv } = column('output', o.name, o.unit, col)
    outputs[o.name] = Float64Array.from(values, (v) => (v === null ? NaN : toInternal(conv, v)))
  }
  const inputs: ExperimentData['inputs'] = {}
  for (const i of model.inputs) {
    const col = mapping.inputs[i.name]
    if (!col) continue
    const { values, conv } = column('input', i.name, i.unit, col)
    let count = 0
    for (let k = 0; k < values.length; k++) { const x = values[k]; if (x !== null && Number.isFinite(x)) count++ }
    if (!count) throw new RecordMappingError(`dataset '${ds.name}', column '${col}' for input '${i.name}' has no values`)
    const t = new Float64Array(count)
    const v = new Float64Array(count)
    for (let k = 0, c = 0; k < values.length; k++) {
      const x = values[k]
      if (x === null || !Number.isFinite(x)) continue
      t[c] = time[k]
      v[c++] = toInternal(conv, x)
    }
    inputs[i.name] = { t, v }
  }
  return { name: ds.name, source: ds.name, time, outputs, inputs }
}
