/**
 * The parameter vector and constant inputs a hand-over works with: the sheet's values, then a fit's
 * shared estimates or a saved parameter set, then explicit overrides; with a provenance line saying
 * which values came from where. Values arrive in declared units and leave in internal units.
 */
import { toInternal, type CompiledModel } from '../../sheet/compiled'
import type { FitResult } from '../../api/fit'
import { AnalysisInputError } from './errors'

export interface ResolvedValues {
  p: Float64Array
  /** nu constant inputs, internal units */
  u: Float64Array
  provenance: string
}

export interface ValueSources {
  /** shared estimates of a fit (declared units), applied over the sheet's values */
  fit?: { result: FitResult; label: string } | null
  /** a saved parameter set: name → value in declared units */
  parameterSet?: { values: Record<string, { value: number }>; label: string } | null
  /** overrides (declared units): parameters */
  set?: Record<string, number>
  /** constant input values (declared units) */
  inputs?: Record<string, number>
}

export function resolveValues(model: CompiledModel, src: ValueSources): ResolvedValues {
  const p = Float64Array.from(model.params, (x) => x.value)
  const u = Float64Array.from(model.inputs, (x) => x.value)
  const parts: string[] = []
  const from = (name: string) => model.params.findIndex((x) => x.name === name)
  if (src.fit) {
    const used: string[] = []
    for (const r of src.fit.result.parameters) {
      if (r.experiment !== null) continue
      const i = from(r.name)
      if (i < 0) continue
      p[i] = toInternal(model.params[i], r.value)
      used.push(r.name)
    }
    parts.push(used.length ? `${used.join(', ')} from ${src.fit.label}` : `no shared estimate in ${src.fit.label}`)
  }
  if (src.parameterSet) {
    const used: string[] = []
    for (const [name, v] of Object.entries(src.parameterSet.values)) {
      const i = from(name)
      if (i < 0) continue
      p[i] = toInternal(model.params[i], v.value)
      used.push(name)
    }
    parts.push(used.length ? `${used.join(', ')} from ${src.parameterSet.label}` : `no parameter of this sheet in ${src.parameterSet.label}`)
  }
  const sets = Object.entries(src.set ?? {})
  for (const [name, v] of sets) {
    const i = from(name)
    if (i < 0) throw new AnalysisInputError(`set ${name}: the sheet has no parameter named '${name}' (parameters: ${model.params.map((x) => x.name).join(', ') || 'none'})`)
    if (!Number.isFinite(v)) throw new AnalysisInputError(`set ${name}: the value must be a finite number`)
    p[i] = toInternal(model.params[i], v)
  }
  if (sets.length) parts.push(`${sets.map(([n, v]) => `${n} = ${v}`).join(', ')} set by hand`)
  for (const [name, v] of Object.entries(src.inputs ?? {})) {
    const i = model.inputs.findIndex((x) => x.name === name)
    if (i < 0) throw new AnalysisInputError(`input ${name}: the sheet has no input named '${name}' (inputs: ${model.inputs.map((x) => x.name).join(', ') || 'none'})`)
    if (!Number.isFinite(v)) throw new AnalysisInputError(`input ${name}: the value must be a finite number`)
    u[i] = toInternal(model.inputs[i], v)
  }
  const provenance = parts.length ? `sheet values, with ${parts.join('; ')}` : 'sheet values'
  return { p, u, provenance }
}

/** all input slots (nu + nd) for constant inputs: a delayed slot holds its input's value */
export function inputSlots(model: CompiledModel, u: Float64Array): Float64Array {
  const s = new Float64Array(Math.max(1, model.nu + model.nd))
  s.set(u.subarray(0, model.nu))
  model.delays.forEach((d, k) => { s[model.nu + k] = u[d.input] })
  return s
}
