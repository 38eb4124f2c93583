/**
 * The quick simulation's work as the Web Worker runs it (src/workers/quickSimulation.ts), in Node: the
 * heated buffer vessel template compiled and integrated to its steady level. The check is the closed
 * form of the sheet's own outlet law (Torricelli: q_out = Cv·√h, so at rest q_in = Cv·√h* and
 * h* = (q_in/Cv)²), derived by hand, as in tests/e2e/handover.test.ts.
 */
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { compileQuick, simulateQuick } from '../../src/workers/quickSimulation'

const text = readFileSync('models/heated-buffer-vessel.sheet', 'utf8')

function compiled() {
  const r = compileQuick(text)
  if (!r.compiled) throw new Error(r.message)
  return r
}

describe('quick simulation (worker side)', () => {
  it('describes the controls in declared units', () => {
    const { info } = compiled()
    const cv = info.params.find((p) => p.name === 'Cv')!
    expect(cv).toMatchObject({ unit: 'm^2.5/s', value: 4e-3, lower: 1e-4, upper: 1e-1, fixed: false })
    expect(info.params.find((p) => p.name === 'A')!.fixed).toBe(true)
    expect(info.inputs.find((u) => u.name === 'q_in')).toMatchObject({ unit: 'm^3/s', value: 2e-3 })
    expect(info.timeUnit).toBe('s')
    expect(info.outputs).toEqual(['level', 'temp'])
  })

  it('reaches the closed-form steady level, and follows a slider value', () => {
    const { compiled: c } = compiled()
    const base = { values: {}, tEnd: 20_000, stepInput: '', stepTime: 0, stepValue: 0, show: 'outputs' as const }
    const r = simulateQuick(c, base)
    if (!r.ok) throw new Error(r.message)
    expect(r.t).toHaveLength(401)
    const level = r.series.find((s) => s.name === 'level')!
    expect(level.unit).toBe('m')
    expect(level.y[0]).toBeCloseTo(0.8, 12) // the sheet's initial level
    expect(level.y[400]).toBeCloseTo((2e-3 / 4e-3) ** 2, 4) // h* = 0.25 m
    const faster = simulateQuick(c, { ...base, values: { Cv: 8e-3 } })
    if (!faster.ok) throw new Error(faster.message)
    expect(faster.series.find((s) => s.name === 'level')!.y[400]).toBeCloseTo((2e-3 / 8e-3) ** 2, 4) // h* = 0.0625 m
  })

  it('steps an input and answers states on request', () => {
    const { compiled: c } = compiled()
    const r = simulateQuick(c, { values: {}, tEnd: 20_000, stepInput: 'q_in', stepTime: 100, stepValue: 4e-3, show: 'states' })
    if (!r.ok) throw new Error(r.message)
    expect(r.series.map((s) => s.name)).toEqual(['h', 'T'])
    expect(r.series[0].y[400]).toBeCloseTo((4e-3 / 4e-3) ** 2, 3) // h* = 1 m after the feed doubles
  })

  it('refuses a sheet with errors and a non-positive end time, saying why', () => {
    const bad = compileQuick(text.replace("dh/dt = (q_in - q_out) / A", "dh/dt = (q_in - q_out) / Area"))
    expect(bad.compiled).toBeNull()
    if (!bad.compiled) expect(bad.message).toMatch(/^line \d+: .*Area/)
    const r = simulateQuick(compiled().compiled, { values: {}, tEnd: 0, stepInput: '', stepTime: 0, stepValue: 0, show: 'outputs' })
    expect(r).toEqual({ ok: false, message: 'The end time must be greater than 0.' })
  })
})
