// The typed model parseModel returns.
import { describe, expect, it } from 'vitest'
import { parseModel } from '../../shared/sheet/index'
import { templates } from './helpers'

describe('parseModel', () => {
  it('returns the typed model of the buffer-vessel sheet', () => {
    const { model, diagnostics } = parseModel(templates().find((t) => t.file === 'heated-buffer-vessel.sheet')!.text)
    expect(diagnostics).toEqual([])
    const m = model!
    expect(m.title).toBe('Heated buffer vessel')
    expect(m.kind).toBe('continuous')
    expect(m.timeUnit).toBe('s')
    expect(m.states.map((s) => [s.name, s.initial, s.estimate, s.lower, s.upper])).toEqual([['h', 0.8, false, null, null], ['T', 300, true, 270, 370]])
    expect(m.params.map((p) => [p.name, p.fixed])).toEqual([['A', true], ['Cv', false], ['UA', false], ['tau', false]])
    expect(m.consts.map((c) => c.name)).toEqual(['rho', 'cp', 'T_amb'])
    expect(m.inputs.map((u) => [u.name, u.interp])).toEqual([['q_in', 'linear'], ['T_feed', 'linear'], ['P_h', 'hold'], ['opening', 'hold']])
    expect(m.lookups[0].name).toBe('valve_lift')
    expect(Array.from(m.lookups[0].xs)).toEqual([0, 0.5, 1])
    expect(m.lets.map((l) => l.name)).toEqual(['q_out'])
    expect(m.equations.map((q) => [m.states[q.state].name, q.form, q.text])).toEqual([
      ['h', 'derivative', '(q_in - q_out) / A'],
      ['T', 'derivative', '(q_in * (delay(T_feed, tau) - T) + (P_h - UA * (T - T_amb)) / (rho * cp)) / (A * h)'],
    ])
    expect(m.outputs.map((o) => [o.name, o.unit?.text, o.sigma])).toEqual([['level', 'm', 0.005], ['temp', 'K', null]])
    expect(m.delays).toEqual([{ input: 1, param: 3, constValue: 20 }])
    expect(m.states[1].description).toBe('liquid temperature')
  })

  it('reads lookups over several lines, descriptions, comments with quotes, and CRLF line ends', () => {
    const text = [
      'model "multi # line"  # a comment with "quotes"',
      'lookup f [degC] -> [kW] = { 0: 1,',
      '   10: 2,  # comment inside',
      '   20: 4 }',
      'state T = 5 [degC] "room # temperature"',
      'let q = f(T) "heat load"',
      "dT/dt = -q / C",
      'const C = 1 [MJ/K]',
      'output y = T',
    ].join('\r\n')
    const { model, diagnostics } = parseModel(text)
    expect(diagnostics).toEqual([])
    expect(model!.title).toBe('multi # line')
    expect(Array.from(model!.lookups[0].xs)).toEqual([273.15, 283.15, 293.15])
    expect(Array.from(model!.lookups[0].ys)).toEqual([1000, 2000, 4000])
    expect(model!.states[0].description).toBe('room # temperature')
    expect(model!.lets[0].description).toBe('heat load')
    // an output of a single symbol takes that symbol's unit
    expect(model!.outputs[0].unit?.text).toBe('degC')
  })

  it('reads a discrete sheet', () => {
    const { model } = parseModel(templates().find((t) => t.file === 'discrete-first-order.sheet')!.text)
    expect(model!.kind).toBe('discrete')
    expect(model!.sampleTime).toBe(10)
    expect(model!.equations[0].form).toBe('next')
  })

  it('orders lets by use, whatever their order in the sheet', () => {
    const { model } = parseModel("state x = 1 [m]\nlet c = b * 2\nlet b = a + x\nlet a = x\nparam k = 1 [1/s] in [0, 2]\ndx/dt = -k * c\noutput y = x")
    const names = model!.letOrder.map((i) => model!.lets[i].name)
    expect(names).toEqual(['a', 'b', 'c'])
  })
})
