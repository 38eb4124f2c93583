/**
 * `npm run bench:events`: the cost of events. For a bouncing ball (an impact every 0.2–0.9 s) and a
 * thermostat on a first-order room (a switch every 5–10 min), per solver: events fired, accepted
 * steps, right-side evaluations and wall-clock time per call (best of repeated runs), without and
 * with forward sensitivities. Prints a table; not a test. The sheets are those of the event tests
 * (fixtures/engine/event-sheets.ts, invented).
 */
import { cpus, loadavg } from 'node:os'
import { compileModel } from '../shared/sheet'
import { simulate, type SimulationRequest, type SolverName } from '../shared/engine'
import type { CompiledModel } from '../shared/sheet/compiled'
import { BALL, THERMOSTAT_ROOM } from '../fixtures/engine/event-sheets'
import { lpad, pad } from './table'

const problems: { name: string; model: CompiledModel; tEnd: number }[] = [
  { name: 'bouncing ball, 3.5 s', model: compileModel(BALL), tEnd: 3.5 },
  { name: 'thermostat room, 60000 s', model: compileModel(THERMOSTAT_ROOM), tEnd: 60_000 },
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
