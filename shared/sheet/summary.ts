/** The person-facing summary of a sheet (declared units, as written). */
import type { ParsedModel } from './model'

export interface SheetSummary {
  title: string
  kind: 'continuous' | 'discrete'
  timeUnit: string
  sampleTime: number | null
  states: { name: string; unit: string; initial: number; lower: number | null; upper: number | null; estimate: boolean; steady: boolean; description: string; line: number }[]
  parameters: { name: string; value: number; unit: string; lower: number | null; upper: number | null; fixed: boolean; description: string; line: number }[]
  inputs: { name: string; value: number; unit: string; interp: 'linear' | 'hold'; delayed: boolean; description: string; line: number }[]
  outputs: { name: string; unit: string; sigma: number | null; description: string; line: number }[]
  consts: { name: string; value: number; unit: string; line: number }[]
  lookups: { name: string; points: number; line: number }[]
  lets: number
  parts: { name: string; handle: string; version: number; description: string; line: number; inputs: { name: string; unit: string }[]; outputs: { name: string; unit: string }[] }[]
  partsUsed: { handle: string; version: number }[]
  modes: { name: string; initial: number; description: string; line: number }[]
  events: { condition: string; direction: 'up' | 'down' | 'either'; assigns: string[]; description: string; line: number }[]
}

export function summarize(m: ParsedModel): SheetSummary {
  const unit = (u: { text: string } | null) => (u ? u.text : '')
  return {
    title: m.title,
    kind: m.kind,
    timeUnit: m.timeUnit,
    sampleTime: m.sampleTime,
    states: m.states.map((s) => ({ name: s.name, unit: unit(s.unit), initial: s.declaredInitial, lower: s.declaredLower, upper: s.declaredUpper, estimate: s.estimate, steady: s.steady, description: s.description, line: s.span.line })),
    parameters: m.params.map((p) => ({ name: p.name, value: p.declaredValue, unit: unit(p.unit), lower: p.declaredLower, upper: p.declaredUpper, fixed: p.fixed, description: p.description, line: p.span.line })),
    inputs: m.inputs.map((u, i) => ({ name: u.name, value: u.declaredValue, unit: unit(u.unit), interp: u.interp, delayed: m.delays.some((d) => d.input === i), description: u.description, line: u.span.line })),
    outputs: m.outputs.map((o) => ({ name: o.name, unit: unit(o.unit), sigma: o.declaredSigma, description: o.description, line: o.span.line })),
    consts: m.consts.map((c) => ({ name: c.name, value: c.declaredValue, unit: unit(c.unit), line: c.span.line })),
    lookups: m.lookups.map((l) => ({ name: l.name, points: l.xs.length, line: l.span.line })),
    lets: m.lets.length,
    parts: (m.parts ?? []).map((p) => ({ name: p.name, handle: p.handle, version: p.version, description: p.description, line: p.line, inputs: p.inputs, outputs: p.outputs })),
    partsUsed: (m.partsUsed ?? []).map((p) => ({ handle: p.handle, version: p.version })),
    modes: m.modes.map((x) => ({ name: x.name, initial: x.initial, description: x.description, line: x.span.line })),
    events: m.events.map((e) => ({
      condition: e.text, direction: e.direction, description: e.description, line: e.span.line,
      assigns: e.resets.map((r) => (r.target === 'state' ? m.states[r.index].name : m.modes[r.index].name)),
    })),
  }
}

export function emptySummary(): SheetSummary {
  return { title: '', kind: 'continuous', timeUnit: 's', sampleTime: null, states: [], parameters: [], inputs: [], outputs: [], consts: [], lookups: [], lets: 0, parts: [], partsUsed: [], modes: [], events: [] }
}
