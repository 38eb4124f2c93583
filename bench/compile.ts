/**
 * `npm run bench:compile`: speed of the compiled right-hand side against mathjs
 * `compile().evaluate` on the same sheets (the templates in models/ without indexed arrays), and the time to parse,
 * check and compile a generated 50-state sheet. Prints figures; asserts nothing.
 */
import { compile as mjCompile } from 'mathjs'
import { checkModel, compileModel, parseModel, type ParsedModel } from '../shared/sheet/index'
import { defaultPoint, interpClamped } from '../fixtures/sheet/reference'
import { templates } from '../fixtures/sheet/templates'

/** a right side evaluated by mathjs: compiled expressions and a scope refreshed per call */
function mathjsRhs(m: ParsedModel) {
  const lets = m.letOrder.map((i) => ({ name: m.lets[i].name, code: mjCompile(m.lets[i].text) }))
  const eqs = m.equations.map((q) => ({ code: mjCompile(q.text), factor: q.timeFactor }))
  const scope: Record<string, unknown> = {}
  m.consts.forEach((c) => (scope[c.name] = c.value))
  // modes read their current position: the initial one outside a simulation
  m.modes.forEach((s) => (scope[s.name] = s.initial))
  m.lookups.forEach((l) => (scope[l.name] = (v: number) => interpClamped(l.xs, l.ys, v)))
  let uCur: Float64Array = new Float64Array(0)
  // delays in these sheets: one slot per (input, tau); the slot value is the current input here
  scope.delay = (v: number) => v
  return (t: number, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array) => {
    uCur = u
    m.states.forEach((s, i) => (scope[s.name] = x[i]))
    m.params.forEach((s, i) => (scope[s.name] = p[i]))
    m.inputs.forEach((s, i) => (scope[s.name] = uCur[i]))
    scope.t = t * m.secondsPerTimeUnit
    for (const l of lets) scope[l.name] = l.code.evaluate(scope)
    for (let i = 0; i < eqs.length; i++) out[i] = eqs[i].factor * (eqs[i].code.evaluate(scope) as number)
  }
}

type Rhs = (t: number, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array) => void

type Loop = (f: Rhs, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array, n: number) => void
/**
 * A fresh copy of the timing loop for each function measured, so that its call site sees one
 * target only (as in the engine's own loops) rather than every sheet measured before.
 */
function freshLoop(): Loop {
  return new Function('f', 'x', 'p', 'u', 'out', 'n', 'for (let i = 0; i < n; i++) f(i * 1e-9, x, p, u, out)') as Loop
}

interface Job { f: Rhs; x: Float64Array; p: Float64Array; u: Float64Array; out: Float64Array; n: number }
/**
 * Calls per second of each job: the jobs are timed in turn, 9 rounds, and the best round of each
 * is kept (the machine is shared: interleaving lets every job meet the same load).
 */
function rates(jobs: Job[]): number[] {
  const loops = jobs.map(() => freshLoop())
  jobs.forEach((j, k) => loops[k](j.f, j.x, j.p, j.u, j.out, j.n))
  const best = jobs.map(() => Infinity)
  for (let r = 0; r < 9; r++) {
    jobs.forEach((j, k) => {
      const t0 = performance.now()
      loops[k](j.f, j.x, j.p, j.u, j.out, j.n)
      best[k] = Math.min(best[k], performance.now() - t0)
    })
  }
  return jobs.map((j, k) => (j.n / best[k]) * 1000)
}
const rate = (f: Rhs, x: Float64Array, p: Float64Array, u: Float64Array, out: Float64Array, n: number) => rates([{ f, x, p, u, out, n }])[0]

function fmt(v: number): string {
  return v >= 1e6 ? `${(v / 1e6).toFixed(2)} M` : v >= 1e3 ? `${(v / 1e3).toFixed(1)} k` : v.toFixed(0)
}

console.log('RHS evaluations per second: compiled sheet vs mathjs compile().evaluate (same sheet, same point)')
console.log('sheet'.padEnd(36), 'compiled/s'.padStart(12), 'mathjs/s'.padStart(12), 'speed-up'.padStart(10))
const ratios: number[] = []
// a sheet with indexed arrays (`..`) has no mathjs counterpart: its loops and sums are the compiler's own
for (const { file, text } of templates().filter((x) => !x.text.includes('..'))) {
  const m = parseModel(text).model!
  const c = compileModel(text)
  const { x, p, u } = defaultPoint(c)
  const out = new Float64Array(c.nx)
  const ref = new Float64Array(c.nx)
  const mj = mathjsRhs(m)
  mj(0, x, p, u, ref)
  c.rhs(0, x, p, u, out)
  const agree = Array.from(out).every((v, i) => Math.abs(v - ref[i]) <= 1e-12 * Math.max(Math.abs(v), Math.abs(ref[i]), 1e-300))
  const [rc, rm] = rates([{ f: c.rhs, x, p, u, out, n: 200_000 }, { f: mj, x, p, u, out: ref, n: 2_000 }])
  ratios.push(rc / rm)
  console.log(file.padEnd(36), fmt(rc).padStart(12), fmt(rm).padStart(12), `${(rc / rm).toFixed(0)}x`.padStart(10), agree ? '' : '  (values differ!)')
}
ratios.sort((a, b) => a - b)
const geo = Math.exp(ratios.reduce((a, r) => a + Math.log(r), 0) / ratios.length)
console.log(`speed-up: min ${ratios[0].toFixed(0)}x, median ${ratios[Math.floor(ratios.length / 2)].toFixed(0)}x, geometric mean ${geo.toFixed(0)}x (target >= 100x)`)

/** a chain of 50 heated tanks in series, each with its own level-dependent outflow: 50 states */
function generated(n: number, salt: number): string {
  const lines = [`# generated benchmark sheet (${salt})`, `model "chain of ${n} tanks"`, 'time [s]', 'input q0 = 1e-3 [m^3/s] linear', 'input T0 = 300 [K] linear', 'param k = 2e-3 [m^2.5/s] in [1e-4, 1e-1]', 'param A = 0.5 [m^2] fixed', 'param UA = 20 [W/K] in [0, 1000]', 'const T_amb = 293.15 [K]', 'const rho_cp = 4.18e6 [J/(m^3*K)]']
  for (let i = 1; i <= n / 2; i++) {
    lines.push(`state h${i} = 0.5 [m] "level ${i}"`, `state T${i} = 300 [K] "temperature ${i}"`)
    lines.push(`let q${i} = k * sqrt(max(h${i}, 0))`)
    const qin = i === 1 ? 'q0' : `q${i - 1}`
    const Tin = i === 1 ? 'T0' : `T${i - 1}`
    lines.push(`h${i}' = (${qin} - q${i}) / A`)
    lines.push(`T${i}' = (${qin} * (${Tin} - T${i}) - UA * (T${i} - T_amb) / rho_cp) / (A * max(h${i}, 0.01))`)
  }
  lines.push(`output level = h${n / 2} [m] sigma 0.01`, `output temp = T${n / 2} [K] sigma 0.1`)
  return lines.join('\n')
}

const times = { parse: [] as number[], check: [] as number[], compile: [] as number[] }
for (let r = 0; r < 12; r++) {
  const text = generated(50, r) // a new text each time: no cache hit
  let t0 = performance.now()
  parseModel(text)
  times.parse.push(performance.now() - t0)
  t0 = performance.now()
  const ck = checkModel(text)
  times.check.push(performance.now() - t0)
  if (!ck.ok) throw new Error(JSON.stringify(ck.diagnostics.slice(0, 3)))
  t0 = performance.now()
  compileModel(text)
  times.compile.push(performance.now() - t0)
}
const med = (a: number[]) => [...a].sort((x, y) => x - y)[Math.floor(a.length / 2)]
const c50 = compileModel(generated(50, 0))
console.log(`\ngenerated 50-state sheet (${c50.nx} states, ${c50.np} params, source ${(c50.source.length / 1024).toFixed(0)} KiB), median of 12 runs:`)
console.log(`  parseModel ${med(times.parse).toFixed(1)} ms, checkModel ${med(times.check).toFixed(1)} ms, compileModel (parse + check + codegen) ${med(times.compile).toFixed(1)} ms`)
const { x, p, u } = defaultPoint(c50)
const out = new Float64Array(c50.nx)
const jac = new Float64Array(c50.nx * c50.nx)
console.log(`  rhs ${fmt(rate(c50.rhs, x, p, u, out, 20_000))}/s, dfdx ${fmt(rate(c50.dfdx, x, p, u, jac, 5_000))}/s`)
