/**
 * `npm run bench:sim`: steps, RHS evaluations and time per problem at rtol 1e-6 and 1e-9 for each
 * method of the engine, and — where python3 with scipy is installed — scipy.integrate.solve_ivp on
 * the same problems in the same run, with the time ratio scipy/ours (> 1: we are faster).
 * Pairs compared: rk45 ↔ RK45 (both Dormand–Prince 5(4)), odex ↔ DOP853 (high order, non-stiff),
 * stiff ↔ Radau (with the exact Jacobian), auto ↔ LSODA (both switch on stiffness).
 * Prints a table; not a test. Times are the best (minimum) of repeated runs, wall clock, whole call,
 * on both sides: the minimum is the estimate least disturbed by other processes on a shared machine.
 * Then the stiff path's work–precision table (bench/sim-stiff.ts) and the cost of sensitivities and
 * auto's switch on it (bench/sim-sens.ts; `npm run bench:sim -- sens` runs that part alone).
 */
import { cpus, loadavg } from 'node:os'
import { simulate, type SolverName } from '../shared/engine'
import type { CompiledModel, VecFn } from '../shared/sheet/compiled'
import { stiffWorkPrecision } from './sim-stiff'
import { autoSwitch, sensitivityBench, sensitivityCost } from './sim-sens'
import { runScipy } from './scipy'
import { lpad, pad } from './table'

interface Problem {
  name: string
  model: CompiledModel
  tEnd: number
  atolFactor: number
  /** methods that cannot finish (stiff problem, explicit method) are skipped */
  skip: SolverName[]
  sens?: { params: number[]; initialStates: number[] }
  py: string
}

/**
 * d2f is the sensitivities' coupling term (shared/sheet/compiled.ts, packed X = [x, s, v, τ],
 * P = [p, q]), written out by hand; a problem never run with sensitivities has none.
 */
function model(name: string, states: number[], params: number[], rhs: VecFn, dfdx: VecFn, dfdp?: VecFn, d2f?: VecFn): CompiledModel {
  const nx = states.length
  const np = params.length
  const u = { unit: '', scale: 1, offset: 0 }
  const zero: VecFn = (_t, _x, _p, _uu, o) => { o.fill(0) }
  return {
    hash: name, title: name, kind: 'continuous', timeUnit: 's', secondsPerTimeUnit: 1, sampleTime: null,
    states: states.map((v, i) => ({ ...u, name: `x${i}`, description: '', initial: v, estimate: false, steady: false, lower: null, upper: null, line: 0 })),
    params: params.map((v, i) => ({ ...u, name: `p${i}`, description: '', value: v, lower: null, upper: null, fixed: false, line: 0 })),
    inputs: [], outputs: states.map((_, i) => ({ ...u, name: `y${i}`, description: '', sigma: null, line: 0 })), delays: [],
    nx, np, nu: 0, nd: 0, ny: nx,
    rhs,
    outputsFn: (_t, x, _p, _uu, o) => { for (let i = 0; i < nx; i++) o[i] = x[i] },
    dfdx, dfdp: dfdp ?? zero, dfdu: zero, dfdt: zero,
    dgdx: (_t, _x, _p, _uu, o) => { o.fill(0); for (let i = 0; i < nx; i++) o[i * nx + i] = 1 },
    dgdp: zero, dgdu: zero, source: '',
    d2f: d2f ?? (() => { throw new Error(`${name}: this benchmark problem has no coupling term (it is not run with sensitivities)`) }),
    modes: [], events: [], nm: 0, ne: 0, modeValues: new Float64Array(0), eventFns: null,
  }
}

const mu = 0.012277471
const mu1 = 1 - mu
const arenstorf = model('arenstorf', [0.994, 0, 0, -2.00158510637908252240537862224], [],
  (_t, y, _p, _u, o) => {
    const D1 = Math.pow((y[0] + mu) ** 2 + y[1] ** 2, 1.5)
    const D2 = Math.pow((y[0] - mu1) ** 2 + y[1] ** 2, 1.5)
    o[0] = y[2]; o[1] = y[3]
    o[2] = y[0] + 2 * y[3] - (mu1 * (y[0] + mu)) / D1 - (mu * (y[0] - mu1)) / D2
    o[3] = y[1] - 2 * y[2] - (mu1 * y[1]) / D1 - (mu * y[1]) / D2
  },
  (_t, _y, _p, _u, o) => { o.fill(0) }) // not used by the non-stiff methods

const lv = model('lotka-volterra', [1.8, 1.8], [2 / 3, 4 / 3, 1, 1],
  (_t, x, p, _u, o) => { o[0] = p[0] * x[0] - p[1] * x[0] * x[1]; o[1] = p[3] * x[0] * x[1] - p[2] * x[1] },
  (_t, x, p, _u, o) => { o[0] = p[0] - p[1] * x[1]; o[1] = -p[1] * x[0]; o[2] = p[3] * x[1]; o[3] = p[3] * x[0] - p[2] },
  (_t, x, _p, _u, o) => { o.fill(0); o[0] = x[0]; o[1] = -x[0] * x[1]; o[6] = -x[1]; o[7] = x[0] * x[1] })

const osc = model('oscillator', [1, 0], [2.5, 0.15],
  (_t, x, p, _u, o) => { o[0] = x[1]; o[1] = -2 * p[1] * p[0] * x[1] - p[0] * p[0] * x[0] },
  (_t, _x, p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = -p[0] * p[0]; o[3] = -2 * p[1] * p[0] },
  (_t, x, p, _u, o) => { o[0] = 0; o[1] = 0; o[2] = -2 * p[1] * x[1] - 2 * p[0] * x[0]; o[3] = -2 * p[0] * x[1] },
  // D_v D_w f of f₁ = −2ζω x₁ − ω² x₀ (ω = p₀, ζ = p₁): −2(q₁ω + ζq₀) v₁ − 2ω q₀ v₀
  (_t, X, P, _u, o) => { o[0] = 0; o[1] = -2 * (P[3] * P[0] + P[1] * P[2]) * X[5] - 2 * P[0] * P[2] * X[4] })

const eps = 1e-6
const vdp = model('vdpol', [2, 0], [],
  (_t, y, _p, _u, o) => { o[0] = y[1]; o[1] = ((1 - y[0] * y[0]) * y[1] - y[0]) / eps },
  (_t, y, _p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = (-2 * y[0] * y[1] - 1) / eps; o[3] = (1 - y[0] * y[0]) / eps })

const eps3 = 1e-3
const vdp3 = model('vdpol-mild', [2, 0], [],
  (_t, y, _p, _u, o) => { o[0] = y[1]; o[1] = ((1 - y[0] * y[0]) * y[1] - y[0]) / eps3 },
  (_t, y, _p, _u, o) => { o[0] = 0; o[1] = 1; o[2] = (-2 * y[0] * y[1] - 1) / eps3; o[3] = (1 - y[0] * y[0]) / eps3 })

const problems: Problem[] = [
  { name: 'arenstorf (1 period)', model: arenstorf, tEnd: 17.0652165601579625588917206249, atolFactor: 1, skip: [],
    py: `mu=0.012277471; mu1=1-mu
def f(t,y):
    D1=((y[0]+mu)**2+y[1]**2)**1.5; D2=((y[0]-mu1)**2+y[1]**2)**1.5
    return [y[2],y[3],y[0]+2*y[3]-mu1*(y[0]+mu)/D1-mu*(y[0]-mu1)/D2, y[1]-2*y[2]-mu1*y[1]/D1-mu*y[1]/D2]
jac=None; y0=[0.994,0,0,-2.00158510637908252240537862224]; T=17.0652165601579625588917206249` },
  { name: 'lotka-volterra (t=100)', model: lv, tEnd: 100, atolFactor: 1, skip: [],
    py: `def f(t,x): return [2/3*x[0]-4/3*x[0]*x[1], x[0]*x[1]-x[1]]
def jac(t,x): return [[2/3-4/3*x[1], -4/3*x[0]],[x[1], x[0]-1]]
y0=[1.8,1.8]; T=100` },
  { name: 'damped oscillator (t=20)', model: osc, tEnd: 20, atolFactor: 1e-3, skip: [],
    py: `def f(t,x): return [x[1], -2*0.15*2.5*x[1]-6.25*x[0]]
def jac(t,x): return [[0,1],[-6.25,-0.75]]
y0=[1,0]; T=20` },
  { name: 'oscillator + 4 sensitivities', model: osc, tEnd: 20, atolFactor: 1e-3, skip: [], sens: { params: [0, 1], initialStates: [0, 1] }, py: '' },
  { name: 'vdpol mild (eps=1e-3, t=2)', model: vdp3, tEnd: 2, atolFactor: 1, skip: [],
    py: `eps=1e-3
def f(t,y): return [y[1], ((1-y[0]**2)*y[1]-y[0])/eps]
def jac(t,y): return [[0,1],[(-2*y[0]*y[1]-1)/eps,(1-y[0]**2)/eps]]
y0=[2,0]; T=2` },
  { name: 'VDPOL stiff (eps=1e-6, t=2)', model: vdp, tEnd: 2, atolFactor: 1, skip: ['rk45', 'odex'],
    py: `eps=1e-6
def f(t,y): return [y[1], ((1-y[0]**2)*y[1]-y[0])/eps]
def jac(t,y): return [[0,1],[(-2*y[0]*y[1]-1)/eps,(1-y[0]**2)/eps]]
y0=[2,0]; T=2` },
]

const methods: SolverName[] = ['rk45', 'odex', 'stiff', 'auto']
const pyPair: Record<SolverName, string> = { rk45: 'RK45', odex: 'DOP853', stiff: 'Radau', auto: 'LSODA' }
const rtols = [1e-6, 1e-9]
const NOUT = 11

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b)
  return s[Math.floor(s.length / 2)]
}

function timeOurs(p: Problem, solver: SolverName, rtol: number) {
  const tOut = Float64Array.from({ length: NOUT }, (_, i) => (p.tEnd * i) / (NOUT - 1))
  const req = { tOut, solver, rtol, atol: rtol * p.atolFactor, maxSteps: 2_000_000, sensitivities: p.sens }
  const first = simulate(p.model, req) // warm-up (JIT) and counters
  const times: number[] = []
  const t0 = performance.now()
  for (;;) {
    const el = performance.now() - t0
    if (times.length >= 200 || (times.length >= 20 && el > 1000) || (times.length >= 3 && el > 3000)) break
    const a = performance.now()
    simulate(p.model, req)
    times.push(performance.now() - a)
  }
  return { steps: first.stats.steps, rhs: first.stats.rhsEvals, ms: Math.min(...times), method: first.stats.method }
}

type ScipyTime = { ms: number; nfev: number; steps: number }
function scipyTimes(): Map<string, ScipyTime> | null {
  const jobs = problems.filter((p) => p.py !== '').map((p, i) => ({ i, name: p.name, atolFactor: p.atolFactor, code: p.py, skip: p.skip.map((m) => pyPair[m]) }))
  const r = runScipy<ScipyTime>(jobs, `
for job in jobs:
    ns = {}
    exec(job['code'], ns)
    f, jac, y0, T = ns['f'], ns.get('jac'), ns['y0'], ns['T']
    teval = np.linspace(0, T, ${NOUT})
    for method in ['RK45', 'DOP853', 'Radau', 'LSODA']:
        if method in job['skip']: continue
        for ri, rtol in enumerate([${rtols.join(', ')}]):
            kw = dict(method=method, rtol=rtol, atol=rtol*job['atolFactor'], t_eval=teval)
            if jac is not None and method in ('Radau', 'LSODA'): kw['jac'] = jac
            ms, sol = timed(f, (0, T), y0, kw)
            out[f"{job['name']}|{method}|{ri}"] = dict(ms=ms, nfev=int(sol.nfev), steps=int(getattr(sol, 'nsteps', -1)) if hasattr(sol,'nsteps') else -1, ok=bool(sol.success))
`, { budgetSeconds: 1.0, timeoutMs: 900_000, maxBuffer: 1 << 24 })
  if (typeof r === 'string') {
    console.log(`(${r})`)
    return null
  }
  return r
}

if (process.argv.includes('sens')) {
  sensitivityBench()
  process.exit(0)
}
console.log('Pewter simulation benchmark (wall clock per call, best of repeated runs)')
console.log(`node ${process.version}; ${NOUT} output times per run; atol = rtol × factor per problem; load average ${loadavg().map((v) => v.toFixed(1)).join(' ')} on ${cpus().length} CPUs\n`)
const sp = scipyTimes()
const header = `${pad('problem', 30)} ${pad('method', 7)} ${lpad('rtol', 6)} ${lpad('steps', 8)} ${lpad('RHS', 9)} ${lpad('ms', 9)}   ${pad('scipy', 7)} ${lpad('RHS', 9)} ${lpad('ms', 9)} ${lpad('ratio', 7)}`
console.log(header)
console.log('-'.repeat(header.length))
const ratios: number[] = []
for (const p of problems) {
  for (const m of methods) {
    for (const rtol of rtols) {
      if (p.skip.includes(m)) {
        console.log(`${pad(p.name, 30)} ${pad(m, 7)} ${lpad(rtol.toExponential(0), 6)}   (explicit method not run on this stiff problem)`)
        continue
      }
      const o = timeOurs(p, m, rtol)
      let tail = ''
      const s = sp?.get(`${p.name}|${pyPair[m]}|${rtols.indexOf(rtol)}`)
      if (s) {
        const ratio = s.ms / o.ms
        ratios.push(ratio)
        tail = `   ${pad(pyPair[m], 7)} ${lpad(String(s.nfev), 9)} ${lpad(s.ms.toFixed(2), 9)} ${lpad(ratio.toFixed(1) + '×', 7)}`
      }
      const note = m === 'auto' && o.method.includes('switched') ? ' (switched)' : ''
      console.log(`${pad(p.name, 30)} ${pad(m, 7)} ${lpad(rtol.toExponential(0), 6)} ${lpad(String(o.steps), 8)} ${lpad(String(o.rhs), 9)} ${lpad(o.ms.toFixed(3), 9)}${tail}${note}`)
    }
  }
}
if (ratios.length) {
  console.log(`\nscipy/ours time ratio: min ${Math.min(...ratios).toFixed(1)}×, median ${median(ratios).toFixed(1)}×, max ${Math.max(...ratios).toFixed(1)}× over ${ratios.length} pairs (> 1: Pewter faster)`)
}

const scipyStiff = stiffWorkPrecision()
sensitivityCost(scipyStiff)
autoSwitch()
