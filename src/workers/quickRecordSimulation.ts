/**
 * The quick simulation on a dataset's record: the sheet driven by the record's measured inputs (the same
 * traces a fit builds, shared/data/column-mapping.ts, interpolated by the engine as in fits: each
 * input's own `linear` or `hold`), from the sheet's initial state at t = 0 over the record's samples,
 * set beside the record's measured outputs in the sheet's declared units, with the RMSE per output.
 * Runs inside quickSimulation.worker.ts; pure, tested directly in Node.
 */
import type { CompiledModel } from '@shared/sheet'
import { toDeclared, toInternal } from '@shared/sheet/compiled'
import { simulate } from '@shared/engine/simulate'
import type { ColumnMapping } from '@shared/api/datasets'
import { checkMapping, experimentFromRecord, RecordMappingError } from '@shared/data/column-mapping'

/** A dataset's samples as the worker holds them: time in seconds, NaN where a cell is empty. */
export interface QuickRecord {
  name: string
  time: Float64Array
  columns: { name: string; unit: string; values: Float64Array }[]
}

export interface QuickRecordRequest {
  /** parameter values in declared units, by name (the sheet's value for a missing name) */
  values: Record<string, number>
  mapping: ColumnMapping
  /** most points per plotted trace (every sample counts in the RMSE) */
  maxPlotPoints?: number
}

export interface QuickRecordSeries {
  /** output name, its declared unit, and the record's column it is compared with */
  name: string
  unit: string
  column: string
  /** plotted samples (thinned evenly to at most maxPlotPoints), sheet time unit and declared unit */
  t: Float64Array
  simulated: Float64Array
  measured: Float64Array
  /** over every measured sample at or after t = 0, declared unit */
  rmse: number
  samples: number
}

export type QuickRecordReply =
  | { ok: true; series: QuickRecordSeries[]; span: [number, number]; warnings: string[]; status: string }
  | { ok: false; message: string }

/** The buffers a reply hands back to the page (transferred, not copied). */
export function replyBuffers(r: QuickRecordReply): ArrayBuffer[] {
  if (!r.ok) return []
  return r.series.flatMap((s) => [s.t.buffer, s.simulated.buffer, s.measured.buffer] as ArrayBuffer[])
}

/** The record's typed arrays, to transfer to the worker. */
export function recordBuffers(r: QuickRecord): ArrayBuffer[] {
  return [r.time.buffer, ...r.columns.map((c) => c.values.buffer)] as ArrayBuffer[]
}

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`

export function simulateRecord(c: CompiledModel, rec: QuickRecord, q: QuickRecordRequest): QuickRecordReply {
  const signals = {
    inputs: c.inputs.map((u) => ({ name: u.name, unit: u.unit })),
    outputs: c.outputs.map((o) => ({ name: o.name, unit: o.unit })),
  }
  const problems = checkMapping(signals, q.mapping, rec.columns).filter((x) => x.problem)
  if (problems.length) return { ok: false, message: problems.map((x) => `${x.kind} '${x.signal}' ← column '${x.column}': ${x.problem}`).join('; ') }
  const mapped = c.outputs.filter((o) => q.mapping.outputs[o.name])
  if (!mapped.length) return { ok: false, message: `Map at least one output (${c.outputs.map((o) => o.name).join(', ')}) to a column of '${rec.name}' to compare.` }
  const warnings = c.inputs.filter((u) => !q.mapping.inputs[u.name])
    .map((u) => `No column for input '${u.name}': its sheet value ${Number(toDeclared(u, u.value).toPrecision(6))}${u.unit ? ` ${u.unit}` : ''} is used over the whole record.`)

  let exp
  try {
    exp = experimentFromRecord(c, { name: rec.name, columns: rec.columns, data: { time: rec.time, columns: Object.fromEntries(rec.columns.map((col) => [col.name, col.values])) } }, q.mapping)
  } catch (e) {
    if (e instanceof RecordMappingError) return { ok: false, message: e.message }
    throw e
  }
  // as fits do: the simulation starts at t = 0 from the sheet's initial state; earlier samples are left out
  const time = exp.time
  let first = 0
  while (first < time.length && time[first] < 0) first++
  if (first > 0) warnings.push(`${plural(first, 'sample')} before t = 0 left out.`)
  for (let k = first + 1; k < time.length; k++) {
    if (!(time[k] > time[k - 1])) return { ok: false, message: `'${rec.name}', sample ${k + 1}: the time does not increase.` }
  }
  const tOut = time.slice(first)
  const n = tOut.length
  if (n < 2) return { ok: false, message: `'${rec.name}' has fewer than 2 samples at or after t = 0.` }

  const p = new Float64Array(c.np)
  c.params.forEach((par, i) => { p[i] = toInternal(par, q.values[par.name] ?? toDeclared(par, par.value)) })
  const inputs = c.inputs.map((u) => exp.inputs[u.name] ?? null)
  let result
  try {
    result = simulate(c, {
      tOut, p, inputs, timeBudgetMs: 5000,
      // every sample and input breakpoint is a breakpoint, as in fits (shared/engine/fit/problem.ts)
      maxSteps: Math.max(100_000, 20 * (n + inputs.reduce((a, tr) => a + (tr ? tr.t.length : 0), 0))),
    })
  } catch (e) {
    return { ok: false, message: `The simulation stopped: ${e instanceof Error ? e.message : String(e)}` }
  }

  const maxPts = Math.max(10, q.maxPlotPoints ?? 5000)
  const m = Math.min(n, maxPts)
  const pick = new Int32Array(m)
  for (let i = 0; i < m; i++) pick[i] = m === n ? i : Math.round((i * (n - 1)) / (m - 1))
  const series: QuickRecordSeries[] = mapped.map((o) => {
    const j = c.outputs.indexOf(o)
    const meas = exp.outputs[o.name]
    let ss = 0
    let count = 0
    for (let k = 0; k < n; k++) {
      const y = meas[first + k]
      if (!Number.isFinite(y)) continue
      const d = toDeclared(o, result.y[k * c.ny + j]) - toDeclared(o, y)
      ss += d * d
      count++
    }
    const t = new Float64Array(m)
    const simulated = new Float64Array(m)
    const measured = new Float64Array(m)
    for (let i = 0; i < m; i++) {
      const k = pick[i]
      t[i] = tOut[k]
      simulated[i] = toDeclared(o, result.y[k * c.ny + j])
      measured[i] = toDeclared(o, meas[first + k])
    }
    return { name: o.name, unit: o.unit, column: q.mapping.outputs[o.name]!, t, simulated, measured, rmse: count ? Math.sqrt(ss / count) : NaN, samples: count }
  })
  for (const s of series) if (!s.samples) warnings.push(`Column '${s.column}' for output '${s.name}' has no value at or after t = 0: no RMSE.`)
  const status = `${plural(n, 'sample')} of '${rec.name}'${m < n ? ` (${m} plotted)` : ''}; ${result.stats.method}${result.stats.switched ? ' (switched to stiff)' : ''}, ${result.stats.steps} steps, ${result.stats.elapsedMs.toFixed(0)} ms`
    + (result.warnings.length ? ` · ${result.warnings[0]}` : '')
  return { ok: true, series, span: [tOut[0], tOut[n - 1]], warnings, status }
}
