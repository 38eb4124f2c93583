/** ParsedModel → CompiledModel (the contract in compiled.ts). */
import { generateSource, instantiate } from './codegen'
import type { CompiledModel } from './compiled'
import type { ParsedModel } from './model'
import type { UnitInfo } from './units'

function unitMap(u: UnitInfo | null) {
  return u ? { unit: u.text, scale: u.scale, offset: u.offset } : { unit: '', scale: 1, offset: 0 }
}

export function buildCompiled(m: ParsedModel): CompiledModel {
  const source = generateSource(m)
  const modeValues = Float64Array.from(m.modes, (x) => x.initial)
  const { events: eventFns, ...fns } = instantiate(source, m, modeValues)
  return {
    hash: m.hash,
    title: m.title,
    kind: m.kind,
    timeUnit: m.timeUnit,
    secondsPerTimeUnit: m.secondsPerTimeUnit,
    sampleTime: m.sampleTime,
    states: m.states.map((s) => ({ name: s.name, description: s.description, ...unitMap(s.unit), initial: s.initial, estimate: s.estimate, steady: s.steady, lower: s.lower, upper: s.upper, line: s.span.line })),
    params: m.params.map((p) => ({ name: p.name, description: p.description, ...unitMap(p.unit), value: p.value, lower: p.lower, upper: p.upper, fixed: p.fixed, line: p.span.line })),
    inputs: m.inputs.map((u) => ({ name: u.name, description: u.description, ...unitMap(u.unit), value: u.value, interp: u.interp, line: u.span.line })),
    outputs: m.outputs.map((o) => ({ name: o.name, description: o.description, ...unitMap(o.unit), sigma: o.sigma, line: o.span.line })),
    delays: m.delays.map((d) => ({ ...d })),
    nx: m.states.length,
    np: m.params.length,
    nu: m.inputs.length,
    nd: m.delays.length,
    ny: m.outputs.length,
    modes: m.modes.map((x) => ({ name: x.name, description: x.description, initial: x.initial, line: x.span.line })),
    events: m.events.map((e) => ({
      direction: e.direction, text: e.text, description: e.description, line: e.span.line,
      states: e.resets.flatMap((r) => (r.target === 'state' ? [r.index] : [])),
      modes: e.resets.flatMap((r) => (r.target === 'mode' ? [{ mode: r.index, value: r.value }] : [])),
    })),
    nm: m.modes.length,
    ne: m.events.length,
    modeValues,
    eventFns: eventFns ?? null,
    ...fns,
    source,
  }
}
