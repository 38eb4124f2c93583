/**
 * A, B, C, D of a linearisation as JSON and as CSV, with the point they hold at, the units, the model
 * version, the parameter provenance and the caution.
 * CSV layout (RFC 4180): comment lines starting with '#', then `block,row,column,value` rows, block
 * one of x, u, y (the point: row = symbol, column empty), A, B, C, D (row and column = symbol names).
 */
import type { LinearAnalysis } from '../api/handover'
import type { ExportMeta } from './meta'

export function stateSpaceJson(a: LinearAnalysis, meta: ExportMeta): string {
  const doc = {
    format: 'pewter-state-space/1',
    model: { title: meta.title, version: meta.modelVersion, sheetHash: meta.sheetHash },
    provenance: meta.provenance,
    caution: meta.caution,
    kind: a.kind,
    sampleTime: a.sampleTime,
    timeUnit: a.units.time,
    note: 'deviation variables in the declared units: dx/dt = A dx + B du, dy = C dx + D du about x, u, y',
    at: a.at.kind === 'steady' ? 'operating point' : `t = ${a.at.t}`,
    states: a.states.map((name, i) => ({ name, unit: a.units.states[i], value: a.x[i] })),
    inputs: a.inputs.map((name, i) => ({ name, unit: a.units.inputs[i], value: a.u[i] })),
    outputs: a.outputs.map((name, i) => ({ name, unit: a.units.outputs[i], value: a.y[i] })),
    parameters: a.parameters,
    A: a.A, B: a.B, C: a.C, D: a.D,
    delays: a.delays,
    warnings: a.warnings,
  }
  return `${JSON.stringify(doc, null, 2)}\n`
}

const q = (s: string) => (/[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s)

export function stateSpaceCsv(a: LinearAnalysis, meta: ExportMeta): string {
  const lines: string[] = [
    `# ${meta.title}: linear model (${a.kind}${a.sampleTime ? `, sample time ${a.sampleTime}` : ''}, time unit ${a.units.time})`,
    `# model version: ${meta.modelVersion} (sheet hash ${meta.sheetHash})`,
    `# parameter values: ${meta.provenance}`,
    `# linearised at: ${a.at.kind === 'steady' ? 'an operating point' : `t = ${a.at.t}`}; deviation variables in declared units`,
    `# ${meta.caution}`,
    'block,row,column,value',
  ]
  const point = (block: string, names: string[], units: string[], v: number[]) =>
    names.forEach((n, i) => lines.push([block, q(units[i] ? `${n} [${units[i]}]` : n), '', String(v[i])].join(',')))
  point('x', a.states, a.units.states, a.x)
  point('u', a.inputs, a.units.inputs, a.u)
  point('y', a.outputs, a.units.outputs, a.y)
  const mat = (block: string, rows: string[], cols: string[], m: number[][]) =>
    m.forEach((r, i) => r.forEach((v, j) => lines.push([block, q(rows[i]), q(cols[j]), String(v)].join(','))))
  mat('A', a.states, a.states, a.A)
  mat('B', a.states, a.inputs, a.B)
  mat('C', a.outputs, a.states, a.C)
  mat('D', a.outputs, a.inputs, a.D)
  return `${lines.join('\r\n')}\r\n`
}
