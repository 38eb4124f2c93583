/** Input breakpoints: a linear merge of the sorted traces, built once per traces array and reused. */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { InputSet } from '../../shared/engine/inputs'
import { mulberry32 } from '../../shared/engine/random'

const SHEET = `model "two inputs, one delayed (synthetic)"
time [s]
input u = 0 [1/s]
input w = 0 [1/s] hold
param tau = 0.35 [s] in [0, 2]
param k = 1 [1/s] fixed
state x = 0 [1]
dx/dt = u + delay(w, tau) - k * x
output y = x [1]
`

/** the obvious reference: collect, sort, drop near-duplicates (as the engine did before) */
function reference(traces: { t: Float64Array; shift: number; delayed: boolean }[], t0: number, tEnd: number): number[] {
  const pts: number[] = []
  for (const s of traces) {
    for (const t of s.t) if (t + s.shift > t0 && t + s.shift < tEnd) pts.push(t + s.shift)
    if (s.delayed && t0 + s.shift > t0 && t0 + s.shift < tEnd) pts.push(t0 + s.shift)
  }
  pts.sort((a, b) => a - b)
  const out: number[] = []
  for (const b of pts) if (b - (out.length ? out[out.length - 1] : t0) > 1e-13 * Math.max(1, Math.abs(b))) out.push(b)
  return out
}

describe('input breakpoints', () => {
  const model = compileModel(SHEET)
  it('the merge equals sort-and-deduplicate on random traces with shared and delayed times (seeded)', () => {
    const rand = mulberry32(5)
    for (let trial = 0; trial < 20; trial++) {
      const mk = (n: number, start: number) => {
        const t = new Float64Array(n)
        let x = start
        for (let i = 0; i < n; i++) { x += 0.25 * (1 + Math.floor(rand() * 4)); t[i] = x }
        return { t, v: Float64Array.from(t, () => rand()) }
      }
      const u = mk(50 + trial, -1)
      const w = mk(40, -2)
      const traces = [u, w]
      const set = new InputSet(model, traces)
      const p = Float64Array.from([0.25 * (trial % 5), 1])
      set.prepare(model, p, 0, 30)
      const shift = p[0] / model.secondsPerTimeUnit
      const want = reference([{ t: u.t, shift: 0, delayed: false }, { t: w.t, shift: 0, delayed: false }, { t: w.t, shift, delayed: true }], 0, 30)
      expect(Array.from(set.breakpoints(0, 30))).toEqual(want)
    }
  })

  it('is built once for the same traces, range and delays, and rebuilt when any of them changes', () => {
    const t = Float64Array.from({ length: 1000 }, (_, i) => i)
    const traces = [{ t, v: new Float64Array(1000) }, { t, v: new Float64Array(1000) }]
    const p = Float64Array.from([0.5, 1])
    const a = new InputSet(model, traces)
    a.prepare(model, p, 0, 999)
    const first = a.breakpoints(0, 999)
    const b = new InputSet(model, traces)
    b.prepare(model, p, 0, 999)
    expect(b.breakpoints(0, 999)).toBe(first)
    expect(b.breakpoints(0, 500)).not.toBe(first)
    b.prepare(model, Float64Array.from([0.75, 1]), 0, 999)
    const moved = b.breakpoints(0, 999)
    expect(moved).not.toBe(first)
    expect(moved).toContain(0.75)
    expect(first.length).toBe(998 + 999) // 1..998 from u and w (shared), 0.5..998.5 from the delayed copy
  })
})
