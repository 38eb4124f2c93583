/**
 * Part of `npm run bench:sim` (a benchmark, not a test); `npm run bench:sim -- sens` runs it alone.
 * 1. The cost of forward sensitivities on the stiff path: Robertson with ∂/∂(k1, k2, k3) and VDPOL
 *    with ∂/∂mu and ∂/∂y1(0), at rtol 1e-6, 1e-8, 1e-10 (atol as in the work–precision table):
 *    steps, RHS evaluations and best wall-clock time for the states alone, with the sensitivities
 *    (default: the stiff method's error norm takes the states only) and with `errorControl: true`
 *    (sensitivities in the norm too); Robertson beside scipy's LSODA without sensitivities, same run.
 * 2. auto's switch on Robertson at rtol 1e-6 … 1e-12: the switch time and the steps against the
 *    stiff method alone.
 */
import { simulate, type SimulationRequest } from '../shared/engine'
import { best, problems, pythonRepr, scipyRows, type PyRow } from './sim-stiff'
import { lpad, pad } from './table'

const SENS_RTOLS = [1e-6, 1e-8, 1e-10]

export function sensitivityCost(py: Map<string, PyRow> | string): void {
  console.log('\nSensitivities on the stiff path (exact coupling from the sheet compiler): steps, RHS evaluations, best ms')
  const header = `${pad('problem', 40)} ${lpad('rtol', 6)} ${pad('run', 22)} ${lpad('steps', 7)} ${lpad('×', 5)} ${lpad('RHS', 8)} ${lpad('ms', 8)} ${lpad('/LSODA', 7)}`
  console.log(header)
  console.log('-'.repeat(header.length))
  const [rob, vdp] = problems
  const cases = [
    { p: rob, label: 'Robertson ∂/∂(k1, k2, k3)', sens: { params: [0, 1, 2], initialStates: [] } },
    { p: vdp, label: 'VDPOL ∂/∂mu, ∂/∂y1(0)', sens: { params: [0], initialStates: [0] } },
  ]
  for (const { p, label, sens } of cases) {
    for (const rtol of SENS_RTOLS) {
      const base: SimulationRequest = { tOut: Float64Array.from(p.tOut), solver: 'stiff', rtol, atol: rtol * p.atolFactor, maxSteps: 2_000_000 }
      const lsoda = typeof py === 'string' ? undefined : py.get(`${p.name}|LSODA|${pythonRepr(rtol)}`)
      let plainSteps = 0
      const runs: [string, SimulationRequest][] = [
        ['states alone', base],
        ['sensitivities', { ...base, sensitivities: sens }],
        ['errorControl: true', { ...base, sensitivities: { ...sens, errorControl: true } }],
      ]
      for (const [name, req] of runs) {
        const r = simulate(p.model, req)
        if (name === 'states alone') plainSteps = r.stats.steps
        const ms = best(() => simulate(p.model, req))
        const ratio = lsoda ? (ms / lsoda.ms).toFixed(2) : ''
        console.log(`${pad(label, 40)} ${lpad(rtol.toExponential(0), 6)} ${pad(name, 22)} ${lpad(String(r.stats.steps), 7)} ${lpad((r.stats.steps / plainSteps).toFixed(2), 5)} ${lpad(String(r.stats.rhsEvals), 8)} ${lpad(ms.toFixed(2), 8)} ${lpad(ratio, 7)}`)
      }
      if (lsoda) console.log(`${pad(label.split(' ')[0] + ': scipy LSODA, states alone', 40)} ${lpad(rtol.toExponential(0), 6)} ${pad('', 22)} ${lpad('', 7)} ${lpad('', 5)} ${lpad(String(lsoda.nfev), 8)} ${lpad(lsoda.ms.toFixed(2), 8)}`)
    }
  }
  if (typeof py === 'string') console.log(`(${py})`)
}

export function autoSwitch(): void {
  console.log('\nauto on Robertson (16 outputs to 4e10, atol 1e-14): where it switches, steps against stiff alone')
  const rob = problems[0]
  for (const rtol of [1e-6, 1e-8, 1e-10, 1e-12]) {
    const req: SimulationRequest = { tOut: Float64Array.from(rob.tOut), solver: 'auto', rtol, atol: 1e-14, maxSteps: 2_000_000 }
    const a = simulate(rob.model, req)
    const s = simulate(rob.model, { ...req, solver: 'stiff' })
    const at = /at t = ([^)]+)\)/.exec(a.stats.method)?.[1] ?? 'never'
    console.log(`rtol ${rtol.toExponential(0)}: switch at t = ${at}; auto ${a.stats.steps} steps, ${best(() => simulate(rob.model, req)).toFixed(2)} ms; stiff ${s.stats.steps} steps, ${best(() => simulate(rob.model, { ...req, solver: 'stiff' })).toFixed(2)} ms`)
  }
}

/** `npm run bench:sim -- sens`: this part alone, with its own LSODA runs */
export function sensitivityBench(): void {
  console.log(`Pewter stiff-path sensitivity benchmark (node ${process.version})`)
  sensitivityCost(scipyRows(['LSODA'], SENS_RTOLS, problems.slice(0, 1)))
  autoSwitch()
}
