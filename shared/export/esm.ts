/**
 * Dependency-free ES module export of a compiled sheet: the compiled model's own generated JavaScript
 * (shared/sheet/codegen.ts) wrapped in a module with the parameter values, initial states, default
 * inputs, names, units and unit maps. Runs in Node and in browsers; the functions write into caller
 * Float64Arrays and do not allocate. Layouts and units as in shared/sheet/compiled.ts.
 */
import type { CompiledModel } from '../sheet/compiled'
import type { ParsedModel } from '../sheet/model'
import { blockComment, metaLines, refuseEvents, type ExportMeta } from './meta'

const js = (v: unknown) => JSON.stringify(v)
const f64 = (xs: ArrayLike<number>) => `Float64Array.of(${Array.from(xs, (v) => (Number.isNaN(v) ? 'NaN' : v === Infinity ? 'Infinity' : v === -Infinity ? '-Infinity' : Object.is(v, -0) ? '-0' : String(v))).join(', ')})`

export function exportEsModule(parsed: ParsedModel, model: CompiledModel, p: Float64Array, meta: ExportMeta, x0?: Float64Array): string {
  refuseEvents(model, 'ES module')
  const nuu = model.nu + model.nd
  const u0 = new Float64Array(nuu)
  model.inputs.forEach((s, i) => (u0[i] = s.value))
  model.delays.forEach((dl, k) => (u0[model.nu + k] = model.inputs[dl.input].value))
  const x = x0 ?? Float64Array.from(model.states, (s) => s.initial)
  const sym = (xs: { name: string; unit: string; scale: number; offset: number; description: string }[]) =>
    js(xs.map((s) => ({ name: s.name, unit: s.unit, scale: s.scale, offset: s.offset, description: s.description })))
  return [
    blockComment([
      ...metaLines(meta),
      '',
      'Values are in internal coherent SI units; time t in the sheet\'s time unit (`timeUnit`).',
      'Arrays: x[nx] states, p[np] parameters, u[nu + nd] inputs then delayed-input slots, out as named;',
      'Jacobians row-major (dfdx[i*nx + j] = ∂f_i/∂x_j). declared = (internal - offset) / scale.',
    ]),
    `export const meta = ${js({ title: meta.title, modelVersion: meta.modelVersion, sheetHash: meta.sheetHash, provenance: meta.provenance, caution: meta.caution, generator: meta.generator })};`,
    `export const kind = ${js(model.kind)};`,
    `export const timeUnit = ${js(model.timeUnit)};`,
    `export const secondsPerTimeUnit = ${model.secondsPerTimeUnit};`,
    `export const sampleTime = ${js(model.sampleTime)};`,
    `export const nx = ${model.nx}, np = ${model.np}, nu = ${model.nu}, nd = ${model.nd}, ny = ${model.ny};`,
    `export const states = ${sym(model.states)};`,
    `export const parameters = ${sym(model.params)};`,
    `export const inputs = ${sym(model.inputs)};`,
    `export const outputs = ${sym(model.outputs)};`,
    `export const delays = ${js(model.delays.map((d) => ({ input: d.input, param: d.param, constValue: d.constValue })))};`,
    `/** parameter values, internal units */`,
    `export const parameterValues = ${f64(p)};`,
    `export const initialState = ${f64(x)};`,
    `export const defaultInputs = ${f64(u0)};`,
    `export const toInternal = (symbol, declared) => declared * symbol.scale + symbol.offset;`,
    `export const toDeclared = (symbol, internal) => (internal - symbol.offset) / symbol.scale;`,
    `const fns = (function (TX, TY) {`,
    model.source,
    `})([${parsed.lookups.map((l) => f64(l.xs)).join(', ')}], [${parsed.lookups.map((l) => f64(l.ys)).join(', ')}]);`,
    `export const rhs = fns.rhs;`,
    `export const outputsFn = fns.outputsFn;`,
    `export const dfdx = fns.dfdx, dfdp = fns.dfdp, dfdu = fns.dfdu, dfdt = fns.dfdt;`,
    `export const dgdx = fns.dgdx, dgdp = fns.dgdp, dgdu = fns.dgdu;`,
    '',
  ].join('\n')
}
