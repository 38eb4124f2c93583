/**
 * A linearised interval that reaches past a parameter's bounds is named in the fit's warnings (Bates &
 * Watts 1988, ch. 6: where the linear approximation fails, use profile intervals). Seeded synthetic
 * data of an invented cooling test: a probe cooling from 1 (normalised) with time constant 20 s,
 * watched for 1 s only (tau poorly determined) or for 60 s (well determined).
 */
import { describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { simulate } from '../../shared/engine/simulate'
import { runFit } from '../../shared/engine/fit'
import { intervalBoundWarnings } from '../../shared/engine/fit/interval-checks'
import type { EstimateRow } from '../../shared/api/fit'
import { gaussian } from '../../fixtures/fit/synthetic'

const SHEET = `model "Cooling probe (synthetic)"
time [s]
param tau = 10 [s] in [5, 40] "time constant"
state x = 1 [1]
x' = -x / tau
output y = x [1] sigma 0.05
`

function record(span: number, sigma: number, seed: number) {
  const model = compileModel(SHEET)
  const time = Float64Array.from({ length: 61 }, (_, i) => (i * span) / 60)
  const sim = simulate(model, { tOut: time, inputs: [], p: Float64Array.of(20), rtol: 1e-10 })
  const g = gaussian(seed)
  return { model, spec: { experiments: [{ name: 'probe', time, outputs: { y: Float64Array.from(time, (_, i) => sim.y[i] + sigma * g()) }, inputs: {} }] } }
}

describe('intervals past the bounds', () => {
  it('a short record: tau\'s interval reaches past its upper bound and the fit says so, with the profile as the way on', async () => {
    const { model, spec } = record(1, 0.05, 7)
    const r = await runFit(model, spec, {})
    const tau = r.parameters.find((p) => p.name === 'tau')!
    expect(tau.determined).toBe(true)
    expect(tau.ci95[1]!).toBeGreaterThan(40)
    const w = r.warnings.filter((x) => x.startsWith("'tau': its linearised 95 % interval"))
    expect(w).toHaveLength(1)
    expect(w[0]).toMatch(/reaches past its upper bound 40 .*profile-likelihood interval/)
  })

  it('a long record: the interval lies inside the bounds and no such warning is given', async () => {
    const { model, spec } = record(60, 0.01, 7)
    const r = await runFit(model, spec, {})
    const tau = r.parameters.find((p) => p.name === 'tau')!
    expect(tau.ci95[0]!).toBeGreaterThan(5)
    expect(tau.ci95[1]!).toBeLessThan(40)
    expect(Math.abs(tau.value - 20)).toBeLessThan(3 * tau.stdError!)
    expect(r.warnings.some((x) => /linearised 95 % interval/.test(x))).toBe(false)
  })

  it('words: both bounds, units and the per-record name; rows at a bound or undetermined are left to their own messages', () => {
    const base: EstimateRow = { name: 'UA', experiment: null, unit: 'W/K', value: 400, start: 100, stdError: 300, ci95: [-188, 988], lower: 1, upper: 900, atBound: null, logTransformed: false, determined: true }
    expect(intervalBoundWarnings([base])).toEqual([
      "'UA': its linearised 95 % interval [-188, 988] W/K reaches past its lower bound 1 and upper bound 900 (standard error 75 % of the value): these data determine it poorly and the interval is not to be trusted there; ask for its profile-likelihood interval, or add data that excite it",
    ])
    expect(intervalBoundWarnings([{ ...base, experiment: 1, ci95: [50, 988] }])[0]).toMatch(/^'UA \(record 2\)'.*upper bound 900 \(/)
    expect(intervalBoundWarnings([{ ...base, atBound: 'upper' }, { ...base, determined: false }, { ...base, ci95: [10, 800] }])).toEqual([])
  })
})
