/**
 * The quick simulation's work, free of the page: compile a sheet (the shared compiler) and integrate it
 * (the shared engine, the same code the server's fits run) for one set of slider values and one input
 * step. Runs inside quickSimulation.worker.ts, so typing in the editor never waits for it; tested
 * directly in Node.
 */
import { partsResolver, tryCompileModel, type CompiledModel } from '@shared/sheet'
import { toDeclared, toInternal } from '@shared/sheet/compiled'
import { simulate } from '@shared/engine/simulate'

/** What the panel needs to draw its controls, in declared units. */
export interface QuickModelInfo {
  hash: string
  kind: CompiledModel['kind']
  timeUnit: string
  sampleTime: number | null
  params: { name: string; unit: string; value: number; lower: number | null; upper: number | null; fixed: boolean; description: string }[]
  inputs: { name: string; unit: string; value: number }[]
  outputs: string[]
  states: string[]
  /** inputs and outputs with their declared units, for a record's column mapping */
  signals: { inputs: { name: string; unit: string }[]; outputs: { name: string; unit: string }[] }
}

export interface QuickRequest {
  /** parameter values in declared units, by name (the sheet's value for a missing name) */
  values: Record<string, number>
  tEnd: number
  /** input to step ('' for none), when and to what (declared units) */
  stepInput: string
  stepTime: number
  stepValue: number
  show: 'outputs' | 'states'
}

export interface QuickSeries { name: string; unit: string; y: number[] }
export type QuickReply = { ok: true; t: number[]; series: QuickSeries[]; status: string } | { ok: false; message: string }

const round = (v: number) => Number(v.toPrecision(6))

export function describeModel(c: CompiledModel): QuickModelInfo {
  return {
    hash: c.hash,
    kind: c.kind,
    timeUnit: c.timeUnit,
    sampleTime: c.sampleTime ?? null,
    params: c.params.map((p) => ({
      name: p.name, unit: p.unit, value: round(toDeclared(p, p.value)), fixed: p.fixed, description: p.description,
      lower: p.lower === null ? null : toDeclared(p, p.lower), upper: p.upper === null ? null : toDeclared(p, p.upper),
    })),
    inputs: c.inputs.map((u) => ({ name: u.name, unit: u.unit, value: round(toDeclared(u, u.value)) })),
    outputs: c.outputs.map((o) => o.name),
    states: c.states.map((s) => s.name),
    signals: { inputs: c.inputs.map((u) => ({ name: u.name, unit: u.unit })), outputs: c.outputs.map((o) => ({ name: o.name, unit: o.unit })) },
  }
}

/** Compiles a sheet; the first error (with its line) when it does not compile. */
/** `parts`: the texts of the sheet's parts, keyed `handle@version` (from the editor's library look-up). */
export function compileQuick(text: string, parts?: Record<string, string>): { compiled: CompiledModel; info: QuickModelInfo } | { compiled: null; message: string } {
  const r = tryCompileModel(text, { resolvePart: partsResolver(parts) ?? null })
  if (!r.compiled) {
    const e = r.diagnostics.find((d) => d.severity === 'error')
    return { compiled: null, message: e ? `line ${e.line}: ${e.message}` : 'The sheet does not compile.' }
  }
  return { compiled: r.compiled, info: describeModel(r.compiled) }
}

/** One simulation: 401 points over [0, tEnd] (a discrete sheet: its own samples, at most 2001). */
export function simulateQuick(c: CompiledModel, q: QuickRequest): QuickReply {
  const tEnd = q.tEnd
  if (!(tEnd > 0)) return { ok: false, message: 'The end time must be greater than 0.' }
  const n = c.kind === 'discrete' ? Math.min(2000, Math.floor(tEnd / (c.sampleTime ?? 1))) + 1 : 401
  const dt = c.kind === 'discrete' ? (c.sampleTime ?? 1) : tEnd / (n - 1)
  const tOut = new Float64Array(n)
  for (let i = 0; i < n; i++) tOut[i] = i * dt
  const p = new Float64Array(c.np)
  c.params.forEach((par, i) => { p[i] = toInternal(par, q.values[par.name] ?? toDeclared(par, par.value)) })
  const inputs = c.inputs.map((u) => {
    if (u.name !== q.stepInput) return null
    const ts = q.stepTime
    if (!(ts > 0 && ts < tEnd)) return null
    const v0 = u.value
    const v1 = toInternal(u, q.stepValue)
    if (u.interp === 'hold') return { t: Float64Array.of(0, ts, tEnd), v: Float64Array.of(v0, v1, v1) }
    const d = Math.min(tEnd * 1e-4, (tEnd - ts) / 2)
    return { t: Float64Array.of(0, ts, ts + d, tEnd), v: Float64Array.of(v0, v0, v1, v1) }
  })
  let result
  try {
    result = simulate(c, { tOut, p, inputs, timeBudgetMs: 3000 })
  } catch (e) {
    return { ok: false, message: `The simulation stopped: ${e instanceof Error ? e.message : String(e)}` }
  }
  const status = `${result.stats.method}${result.stats.switched ? ' (switched to stiff)' : ''}, ${result.stats.steps} steps, ${result.stats.elapsedMs.toFixed(0)} ms`
    + (result.warnings.length ? ` · ${result.warnings[0]}` : '')
  const useOutputs = q.show === 'outputs' && c.ny > 0
  const series = useOutputs
    ? c.outputs.map((o, k) => ({ name: o.name, unit: o.unit, y: Array.from({ length: n }, (_, i) => toDeclared(o, result.y[i * c.ny + k])) }))
    : c.states.map((s, k) => ({ name: s.name, unit: s.unit, y: Array.from({ length: n }, (_, i) => toDeclared(s, result.x[i * c.nx + k])) }))
  return { ok: true, t: Array.from(tOut), series: series.slice(0, 6), status }
}
