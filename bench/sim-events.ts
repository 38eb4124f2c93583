/**
 * `npm run bench:events`: the cost of events. For a bouncing ball (an impact every 0.2–0.9 s) and a
 * thermostat on a first-order room (a switch every 5–10 min), per solver: events fired, accepted
 * steps, right-side evaluations and wall-clock time per call (best of repeated runs), without and
 * with forward sensitivities. Prints a table; not a test. The sheets are the test sheets of
 * tests/engine/events.test.ts (invented).
 */
import { cpus, loadavg } from 'node:os'
import { compileModel } from '../shared/sheet'
import { simulate, type SimulationRequest, type SolverName } from '../shared/engine'
import type { CompiledModel } from '../shared/sheet/compiled'

const BALL = `param e_r = 0.8 [1] in [0.1, 0.99]
const g = 9.80665 [m/s^2]
state y = 1 [m]
state v = 0 [m/s]
dy/dt = v
dv/dt = -g
event y falls below 0 then v = -e_r * v
output height = y [m]
`
const ROOM = `time [min]
param UA = 50 [W/K] in [1, 1000]
const C = 2e5 [J/K]
const P_h = 2000 [W]
const T_amb = 5 [degC]
const T_lo = 18 [degC]
const T_hi = 22 [degC]
state T = 20 [degC]
mode heater = off
dT/dt = (heater * P_h - UA * (T - T_amb)) / C
event T falls below T_lo then heater = on
event T rises above T_hi then heater = off
output temp = T [degC]
`
const problems: { name: string; model: CompiledModel; tEnd: number }[] = [
  { name: 'bouncing ball, 3.5 s', model: compileModel(BALL), tEnd: 3.5 },
  { name: 'thermostat room, 1000 min', model: compileModel(ROOM), tEnd: 1000 },
]
const solvers: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']
const NOUT = 201

function best(req: SimulationRequest, model: CompiledModel) {
  let ms = Infinity
  let r = simulate(model, req)
  for (let k = 0; k < 15; k++) {
    const t0 = performance.now()
    r = simulate(model, req)
    ms = Math.min(ms, performance.now() - t0)
  }
  return { ms, r }
}

const pad = (s: string, n: number) => s.padEnd(n)
const lpad = (s: string, n: number) => s.padStart(n)
console.log('Pewter events benchmark (wall clock per call, best of 15 runs)')
console.log(`node ${process.version}; ${NOUT} output times; rtol 1e-8; load average ${loadavg().map((v) => v.toFixed(1)).join(' ')} on ${cpus().length} CPUs\n`)
const header = `${pad('problem', 27)} ${pad('method', 6)} ${pad('sens', 5)} ${lpad('events', 6)} ${lpad('steps', 6)} ${lpad('f evals', 8)} ${lpad('ms', 8)}`
console.log(header)
console.log('-'.repeat(header.length))
for (const p of problems) {
  const tOut = Float64Array.from({ length: NOUT }, (_, i) => (p.tEnd * i) / (NOUT - 1))
  for (const solver of solvers) {
    for (const sens of [false, true]) {
      const req: SimulationRequest = { tOut, solver, rtol: 1e-8, ...(sens ? { sensitivities: { params: [0], initialStates: [0] } } : {}) }
      const { ms, r } = best(req, p.model)
      console.log(`${pad(p.name, 27)} ${pad(solver, 6)} ${pad(sens ? 'yes' : 'no', 5)} ${lpad(String(r.events?.length ?? 0), 6)} ${lpad(String(r.stats.steps), 6)} ${lpad(String(r.stats.rhsEvals), 8)} ${lpad(ms.toFixed(3), 8)}`)
    }
  }
}
