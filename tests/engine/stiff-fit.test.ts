/**
 * A fit on the stiff path at a tight tolerance: Robertson's kinetics written as a sheet (so the
 * sheet compiler's exact Jacobians are used), k1 estimated from seeded synthetic data (invented
 * noise-free samples generated here from the published rate constants).
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate } from '../../shared/engine/simulate'
import { runFit } from '../../shared/engine/fit'

// Robertson's chemical kinetics, k = (0.04, 3e7, 1e4) (Hairer & Wanner, Solving ODEs II, Sec. IV.1,
// eq. (1.4); Test Set for IVP Solvers, problem ROBER).
const SHEET = `model "Three-species kinetics, Robertson's rate constants (synthetic test data)"
time [s]
param k1 = 0.04 [1/s] in [0.001, 1] "slow step"
param k2 = 3e7 [1/s] fixed "fast step"
param k3 = 1e4 [1/s] fixed "middle step"
state a = 1 [1]
state b = 0 [1]
state c = 0 [1]
da/dt = -k1 * a + k3 * b * c
db/dt = k1 * a - k3 * b * c - k2 * b^2
dc/dt = k2 * b^2
output ya = a [1]
output yc = c [1]
`

describe('stiff fit', () => {
  it('Robertson: k1 fitted at rtol 1e-10 with the stiff method and with auto recovers the value used for the data', async () => {
    const m = compileModel(SHEET)
    const time = Float64Array.from({ length: 40 }, (_, i) => 1e-3 * Math.pow(10, (i * 8) / 39))
    const truth = simulate(m, { tOut: time, solver: 'stiff', rtol: 1e-12, atol: 1e-18, maxSteps: 1e6 })
    const ya = Float64Array.from(time, (_, k) => truth.y[k * 2])
    const yc = Float64Array.from(time, (_, k) => truth.y[k * 2 + 1])
    for (const solver of ['stiff', 'auto'] as const) {
      const res = await runFit(m, { experiments: [{ name: 'e1', time, outputs: { ya, yc }, inputs: {} }], set: { k1: 0.1 } }, { solver, rtol: 1e-10 })
      expect(res.status, solver).toBe('converged')
      expect(Math.abs(res.parameters[0].value - 0.04) / 0.04, solver).toBeLessThan(1e-6)
    }
  })
})
