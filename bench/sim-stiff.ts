/**
 * Work–precision of the stiff path for `npm run bench:sim` (a benchmark, not a test): Robertson and
 * VDPOL at rtol 1e-4 … 1e-10, the engine's `stiff` (RODAS4) and `auto` beside scipy's Radau, BDF
 * and LSODA (solve_ivp, exact Jacobian) on the same problems, output times and tolerances, in the
 * same run. For each: accepted steps, RHS evaluations, best wall-clock time of repeated calls, and
 * the error: max over output times and components of |y − ref| / (|ref| + atol).
 * The references come from the engine's RODAS4 at rtol 1e-13, restarted from t0 for every output
 * time (so no interpolation enters them); the stiff tests check that method against scipy Radau.
 */
import { readFileSync } from 'node:fs'
import { simulate, type SolverName, type SimulationRequest } from '../shared/engine'
import { compileModel } from '../shared/sheet'
import type { CompiledModel } from '../shared/sheet/compiled'
import { runScipy } from './scipy'
import { lpad, pad } from './table'

export interface StiffProblem {
  name: string
  model: CompiledModel
  tOut: number[]
  /** atol = rtol × atolFactor (both sides) */
  atolFactor: number
  py: string
}

/** Robertson (Hairer & Wanner, Solving ODEs II, Sec. IV.1, eq. (1.4)) and VDPOL, ε = 1e-6 (eq. (1.5'))
 * as sheets, so the sheet compiler's exact Jacobians and coupling term are what runs */
const sheet = (name: string): CompiledModel => compileModel(readFileSync(new URL(`../tests/engine/fixtures/${name}.sheet`, import.meta.url), 'utf8'))
const robertson = sheet('robertson')
const vdpol = sheet('vdpol')

export const problems: StiffProblem[] = [
  { name: 'Robertson (to 4e10)', model: robertson, tOut: Array.from({ length: 16 }, (_, i) => 4e-5 * 10 ** i), atolFactor: 1e-6,
    py: `def f(t,y): return [-0.04*y[0]+1e4*y[1]*y[2], 0.04*y[0]-1e4*y[1]*y[2]-3e7*y[1]**2, 3e7*y[1]**2]
def jac(t,y): return [[-0.04,1e4*y[2],1e4*y[1]],[0.04,-1e4*y[2]-6e7*y[1],-1e4*y[1]],[0,6e7*y[1],0]]
y0=[1,0,0]` },
  { name: 'VDPOL (eps=1e-6, to 2)', model: vdpol, tOut: Array.from({ length: 20 }, (_, i) => 0.1 * (i + 1)), atolFactor: 1,
    py: `eps=1e-6
def f(t,y): return [y[1], ((1-y[0]**2)*y[1]-y[0])/eps]
def jac(t,y): return [[0,1],[(-2*y[0]*y[1]-1)/eps,(1-y[0]**2)/eps]]
y0=[2,0]` },
]
const RTOLS = [1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10]
const PY_METHODS = ['Radau', 'BDF', 'LSODA']

function reference(p: StiffProblem): number[][] {
  return p.tOut.map((t) => {
    const r = simulate(p.model, { tOut: Float64Array.of(t), solver: 'stiff', rtol: 1e-13, atol: 1e-13 * p.atolFactor * 1e-3, maxSteps: 5_000_000 })
    return Array.from(r.x)
  })
}

function errorOf(y: number[][], ref: number[][], atol: number): number {
  let w = 0
  for (let k = 0; k < ref.length; k++) for (let i = 0; i < ref[k].length; i++) w = Math.max(w, Math.abs(y[k][i] - ref[k][i]) / (Math.abs(ref[k][i]) + atol))
  return w
}

export function best(run: () => void): number {
  run()
  const times: number[] = []
  const t0 = performance.now()
  while (times.length < 3 || (performance.now() - t0 < 1500 && times.length < 50)) {
    const a = performance.now()
    run()
    times.push(performance.now() - a)
  }
  return Math.min(...times)
}

export interface PyRow { ms: number; nfev: number; njev: number; y: number[][]; ok: boolean }

/** scipy's solve_ivp on the problems, keyed `problem|method|repr(rtol)`, or why it was skipped */
export function scipyRows(methods: string[] = PY_METHODS, rtols: number[] = RTOLS, which: StiffProblem[] = problems): Map<string, PyRow> | string {
  const jobs = which.map((p) => ({ name: p.name, code: p.py, t: p.tOut, atolFactor: p.atolFactor }))
  return runScipy<PyRow>(jobs, `
for job in jobs:
    ns = {}
    exec(job['code'], ns)
    t = job['t']
    for method in ${JSON.stringify(methods)}:
        for rtol in ${JSON.stringify(rtols)}:
            kw = dict(method=method, rtol=rtol, atol=rtol*job['atolFactor'], t_eval=t, jac=ns['jac'])
            ms, sol = timed(ns['f'], (0, t[-1]), ns['y0'], kw)
            out[job['name'] + '|' + method + '|' + repr(rtol)] = dict(ms=ms, nfev=int(sol.nfev), njev=int(sol.njev), ok=bool(sol.success), y=sol.y.T.tolist())
`, { budgetSeconds: 1.5, timeoutMs: 1_800_000, maxBuffer: 1 << 26 })
}

/** Prints the table; returns scipy's rows (or why they are missing) for the sensitivity figures. */
export function stiffWorkPrecision(): Map<string, PyRow> | string {
  console.log('\nWork–precision on the stiff path (error = max |y − ref| / (|ref| + atol) over outputs and components)')
  const py = scipyRows()
  if (typeof py === 'string') console.log(`(${py})`)
  const header = `${pad('problem', 24)} ${pad('method', 7)} ${lpad('rtol', 6)} ${lpad('steps', 7)} ${lpad('RHS', 8)} ${lpad('ms', 9)} ${lpad('error', 9)}`
  console.log(header)
  console.log('-'.repeat(header.length))
  for (const p of problems) {
    const ref = reference(p)
    for (const rtol of RTOLS) {
      const atol = rtol * p.atolFactor
      for (const solver of ['stiff', 'auto'] as SolverName[]) {
        const req: SimulationRequest = { tOut: Float64Array.from(p.tOut), solver, rtol, atol, maxSteps: 2_000_000 }
        const r = simulate(p.model, req)
        const nx = p.model.nx
        const y = p.tOut.map((_, k) => Array.from(r.x.subarray(k * nx, (k + 1) * nx)))
        const ms = best(() => simulate(p.model, req))
        console.log(`${pad(p.name, 24)} ${pad(solver, 7)} ${lpad(rtol.toExponential(0), 6)} ${lpad(String(r.stats.steps), 7)} ${lpad(String(r.stats.rhsEvals), 8)} ${lpad(ms.toFixed(2), 9)} ${lpad(errorOf(y, ref, atol).toExponential(1), 9)}`)
      }
      if (typeof py !== 'string') {
        for (const m of PY_METHODS) {
          const s = py.get(`${p.name}|${m}|${pythonRepr(rtol)}`)
          if (!s) continue
          const err = s.ok && s.y.length === ref.length ? errorOf(s.y, ref, atol).toExponential(1) : 'failed'
          console.log(`${pad(p.name, 24)} ${pad(m, 7)} ${lpad(rtol.toExponential(0), 6)} ${lpad('', 7)} ${lpad(String(s.nfev), 8)} ${lpad(s.ms.toFixed(2), 9)} ${lpad(err, 9)}`)
        }
      }
    }
  }
  return py
}

/** Python's repr of a float as used in the result keys (1e-05, 0.0001, 1e-10) */
export function pythonRepr(v: number): string {
  if (v >= 1e-4) return String(v)
  const [m, e] = v.toExponential().split('e')
  const exp = Number(e)
  return `${m}e-${String(-exp).padStart(2, '0')}`
}
