/**
 * The body of the calibrated sheet download (server/services/runs.ts calibratedBody): the shared
 * estimates written into the param lines, and a version stored in the older derivative form
 * written dx/dt = …, so that the downloaded sheet checks without a warning and compiles to the same
 * right side. The sheet and the estimate are invented for this test.
 */
import { describe, expect, it } from 'vitest'
import { calibratedBody } from '../../server/services/runs'
import type { FitResult } from '../../shared/api/fit'
import { checkModel, compileModel } from '../../shared/sheet/index'

const OLDER = `model "tank"
param k = 0.5 [1/s] in [0, 1]
state h = 2 [m]
h' = -k * h   # drains
output level = h [m]`

describe('calibrated sheet body', () => {
  it('writes the estimate and the older derivative line in Leibniz notation', () => {
    const result = { parameters: [{ name: 'k', value: 0.25, experiment: null }] } as unknown as FitResult
    const r = calibratedBody(OLDER, result)
    expect(r.changed).toEqual(['k'])
    expect(r.rewritten).toEqual([4])
    expect(r.text.split('\n')[1]).toBe('param k = 0.25 [1/s] in [0, 1]')
    expect(r.text.split('\n')[3]).toBe('dh/dt = -k * h   # drains')
    expect(checkModel(r.text).diagnostics).toEqual([])
    const c = compileModel(r.text)
    const out = new Float64Array(1)
    c.rhs(0, new Float64Array([2]), new Float64Array([0.25]), new Float64Array(0), out)
    // -k h = -0.5 at k = 0.25, h = 2 (by hand)
    expect(out[0]).toBe(-0.5)
  })

  it('leaves a sheet in the current form as it is', () => {
    const current = OLDER.replace("h' =", 'dh/dt =')
    const r = calibratedBody(current, { parameters: [] } as unknown as FitResult)
    expect(r).toEqual({ text: current, changed: [], rewritten: [] })
  })
})
