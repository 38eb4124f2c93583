/**
 * `npm run bench:fit`: prints time and simulations of fits (a benchmark, not a test).
 *  1. NIST StRD Misra1a and BoxBOD as sheets (y' = b2·(b1 − y)), both NIST starts, lm, rtol = atol = 1e-11.
 *  2. The same fits with scipy's solve_ivp (DOP853, with the forward-sensitivity equations, so both sides
 *     use an exact Jacobian) + least_squares (trf, bounds) when python3 with scipy is installed; the ratio.
 *  3. A 3-state cascade of vessels (seeded synthetic data) on 1 000, 10 000 and 100 000 samples, with the
 *     feed input given on every row; prints time(100 k)/time(10 k) per fit and per simulation (goal ≤ 10),
 *     and the CSV parsing time of the same sheets of data.
 *  `npm run bench:fit -- --scaling` runs part 3 only.
 *  4. Single against multiple shooting (seeded synthetic data, fixtures/fit/shooting.ts): the
 *     predator–prey record from the sheet start 30 % off, and the open-loop unstable plant's closed-loop
 *     record; cost, time and simulations (a multiple-shooting simulation is one segment's).
 *     `npm run bench:fit -- shooting` prints this part alone.
 *  5. The segments of a multiple-shooting fit over threads on a long record (predator–prey, 2 000
 *     samples × 2 outputs, 40 segments): 1 thread against 2 (the fit's thread and one helper thread,
 *     server/jobs/segment-threads.ts, warmed up first); one evaluation with its Jacobian and the whole
 *     fit (whose single-shooting polish runs in one thread either way); the speed-up and whether the
 *     results are identical. `npm run bench:fit -- threads` prints this part alone.
 */
import { spawnSync } from 'node:child_process'
import { availableParallelism, loadavg } from 'node:os'
import { compileModel } from '../shared/sheet'
import { simulate } from '../shared/engine/simulate'
import { runFit, type FitOptions, type ProblemSpec } from '../shared/engine/fit'
import { BOXBOD, MISRA1A, nistSheet, type NistProblem } from '../fixtures/fit/nist'
import { gaussian } from '../fixtures/fit/synthetic'
import { parseCsv } from '../shared/data/csv'
import { LV_SHEET, lotkaVolterraSpec, UNSTABLE_SHEET, unstableSpec } from '../fixtures/fit/shooting'
import { SegmentHelpers } from '../server/jobs/segment-threads'
import { MultipleShootingProblem } from '../shared/engine/fit/multiple-shooting/problem'
import { makeProblem } from '../shared/engine/fit/driver'

async function segmentThreads(): Promise<string> {
  const model = compileModel(LV_SHEET)
  const spec = lotkaVolterraSpec(5, 2000, 0.05)
  const segments = { segments: 40 }
  // a tight integration tolerance: the segments' simulations, the part spread over threads, dominate
  const options = { rtol: 1e-10 }
  const setup = { sheet: LV_SHEET, spec, options, segments }
  const helpers = new SegmentHelpers()
  await helpers.warmUp(1)
  const rows: string[][] = [['threads', 'one evaluation + Jacobian, ms (best of 10)', 'whole fit, ms (best of 3)', 'SSE', 'segment simulations', 'blocks done by the helper']]
  const base: number[] = []
  const sse: number[] = []
  for (const threads of [1, 2]) {
    // one evaluation with the Jacobian, at the sheet start with nodes from the data
    const ms = new MultipleShootingProblem(makeProblem(model, spec, simulate, options), segments, spec.bounds)
    const w = ms.initialNodes(Array.from(ms.base.start))
    const ev = helpers.factory(setup, threads)({ segments: ms.segmentCount, shape: { n: ms.n, m: ms.m, segments: ms.segmentCount }, deadline: undefined })
    ms.evaluator = ev
    while (ev && ev.starting > 0) await new Promise((r) => setTimeout(r, 20))
    const r = new Float64Array(ms.m)
    const jac = new Float64Array(ms.m * ms.n)
    const evalTimes: number[] = []
    for (let k = 0; k < 10; k++) {
      const t = performance.now()
      await ms.evaluateAsync(w, r, jac)
      evalTimes.push(performance.now() - t)
    }
    await ev?.close()
    const served0 = helpers.served
    const fitTimes: number[] = []
    let res = await runFit(model, spec, { ...options, segments, segmentEvaluator: helpers.factory(setup, threads) })
    fitTimes.push(res.elapsedMs)
    for (let k = 1; k < 3; k++) {
      res = await runFit(model, spec, { ...options, segments, segmentEvaluator: helpers.factory(setup, threads) })
      fitTimes.push(res.elapsedMs)
    }
    const e = Math.min(...evalTimes)
    const f = Math.min(...fitTimes)
    base.push(e, f)
    sse.push(res.sse ?? NaN)
    const up = threads === 1 ? '' : ` (speed-up ${g(base[0] / e, 3)}×)`
    const upFit = threads === 1 ? '' : ` (speed-up ${g(base[1] / f, 3)}×)`
    rows.push([String(threads), `${g(e)}${up}`, `${g(f)}${upFit}`, g(res.sse ?? NaN, 12), String(res.multipleShooting?.simulations ?? 0), String(helpers.served - served0)])
  }
  await helpers.close()
  rows.push(['', '', '', sse[0] === sse[1] ? 'identical' : `DIFFER by ${g(Math.abs(sse[0] - sse[1]), 3)}`, '', ''])
  return `${pad(rows)}\nload average while measuring: ${loadavg().map((x) => x.toFixed(1)).join(' ')} on ${availableParallelism()} cores (above the core count the threads compete with other work and the speed-up shrinks); the whole fit also holds the optimiser's linear algebra and the single-shooting polish, which run in one thread`
}

async function shooting(): Promise<string[][]> {
  const rows: string[][] = [['case', 'method', 'SSE', 'ms', 'iterations', 'simulations', 'segment sims', 'continuity defect']]
  const cases = [
    { name: 'predator–prey, 60 samples × 2', model: compileModel(LV_SHEET), spec: lotkaVolterraSpec(), segments: 10 },
    { name: 'unstable plant, 81 samples', model: compileModel(UNSTABLE_SHEET), spec: unstableSpec(), segments: 8 },
  ]
  for (const c of cases) {
    const runs: [string, FitOptions][] = [['single', {}], ['single, 30 starts', { starts: 29, seed: 3 }], [`multiple, ${c.segments} segments`, { segments: { segments: c.segments } }]]
    for (const [label, opts] of runs) {
      const times: number[] = []
      let last = await runFit(c.model, c.spec, opts)
      for (let k = 0; k < 3; k++) {
        last = await runFit(c.model, c.spec, opts)
        times.push(last.elapsedMs)
      }
      const ms = last.multipleShooting
      rows.push([c.name, label, g(last.sse ?? NaN, 8), g(Math.min(...times)), String(last.iterations), String(last.simulations), ms ? String(ms.simulations) : '—', ms ? `${g(ms.defect ?? NaN, 2)} (${ms.continuous ? 'continuous' : 'NOT continuous'})` : '—'])
    }
  }
  return rows
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b)
  return s[Math.floor(s.length / 2)]
}

function pad(rows: string[][]): string {
  const w = rows[0].map((_, c) => Math.max(...rows.map((r) => r[c].length)))
  return rows.map((r) => r.map((x, c) => (c === 0 ? x.padEnd(w[c]) : x.padStart(w[c]))).join('  ')).join('\n')
}

const g = (v: number, d = 4) => Number(v.toPrecision(d)).toString()

interface Row { name: string; ms: number; msMedian: number; sims: number; iters: number; sse: number }

async function nistPewter(): Promise<Row[]> {
  const rows: Row[] = []
  for (const p of [MISRA1A, BOXBOD]) {
    p.starts.forEach(() => undefined)
    for (let s = 0; s < p.starts.length; s++) {
      const model = compileModel(nistSheet(p, p.starts[s]))
      const spec: ProblemSpec = { experiments: [{ name: p.name, time: Float64Array.from(p.x), outputs: { yobs: Float64Array.from(p.y) }, inputs: {} }] }
      const times: number[] = []
      let last = await runFit(model, spec, { rtol: 1e-11, atol: 1e-11 })
      for (let k = 0; k < 15; k++) {
        last = await runFit(model, spec, { rtol: 1e-11, atol: 1e-11 })
        times.push(last.elapsedMs)
      }
      rows.push({ name: `${p.name} start ${s + 1}`, ms: Math.min(...times), msMedian: median(times), sims: last.simulations, iters: last.iterations, sse: last.sse ?? NaN })
    }
  }
  return rows
}

const PY = String.raw`
import json, sys, time
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares
probs = json.loads(sys.argv[1])
out = []
for p in probs:
    x = np.array(p['x']); y = np.array(p['y'])
    nsim = [0]
    def sim(b):
        # states: y, dy/db1, dy/db2
        def f(t, z):
            return [b[1]*(b[0]-z[0]), b[1]*(1.0 - z[1]), (b[0]-z[0]) - b[1]*z[2]]
        nsim[0] += 1
        s = solve_ivp(f, (0.0, float(x[-1])), [0.0, 0.0, 0.0], method='DOP853', t_eval=x, rtol=1e-11, atol=1e-11)
        return s.y
    cache = {}
    def get(b):
        k = tuple(b)
        if k not in cache:
            cache.clear(); cache[k] = sim(b)
        return cache[k]
    def res(b): return get(b)[0] - y
    def jac(b): z = get(b); return np.column_stack([z[1], z[2]])
    for start in p['starts']:
        reps = []
        for r in range(5):
            nsim[0] = 0
            t0 = time.perf_counter()
            sol = least_squares(res, start, jac=jac, bounds=(p['lower'], p['upper']), method='trf', x_scale='jac', xtol=1e-12, ftol=1e-12, gtol=1e-12)
            reps.append((time.perf_counter() - t0) * 1000.0)
        out.append({'name': p['name'], 'start': start, 'ms': min(reps), 'msMedian': sorted(reps)[len(reps)//2], 'sims': nsim[0], 'sse': float(2*sol.cost), 'b': list(map(float, sol.x))})
print(json.dumps(out))
`

function nistScipy(): { name: string; ms: number; msMedian: number; sims: number; sse: number }[] | string {
  const probs = [MISRA1A, BOXBOD].map((p: NistProblem) => ({ name: p.name, x: p.x, y: p.y, starts: p.starts, lower: p.lower, upper: p.upper }))
  const r = spawnSync('python3', ['-c', PY, JSON.stringify(probs)], { encoding: 'utf8', timeout: 600_000 })
  if (r.error || r.status !== 0) return `python3 with scipy not available (${r.error?.message ?? r.stderr.split('\n').filter(Boolean).pop()})`
  const res = JSON.parse(r.stdout) as { name: string; start: number[]; ms: number; msMedian: number; sims: number; sse: number }[]
  const count = new Map<string, number>()
  return res.map((x) => {
    const k = (count.get(x.name) ?? 0) + 1
    count.set(x.name, k)
    return { name: `${x.name} start ${k}`, ms: x.ms, msMedian: x.msMedian, sims: x.sims, sse: x.sse }
  })
}

const CASCADE = `model "Three vessels in cascade (Tinmoor Works buffer line; synthetic benchmark data)"
time [s]
input q = 0.002 [m^3/s] hold "feed"
param A = 1.2 [m^2] fixed "cross-section of each vessel"
param k1 = 0.004 [m^2/s] in [1e-4, 1] "outlet coefficient 1"
param k2 = 0.004 [m^2/s] in [1e-4, 1] "outlet coefficient 2"
param k3 = 0.004 [m^2/s] in [1e-4, 1] "outlet coefficient 3"
state h1 = 0.3 [m]
state h2 = 0.3 [m]
state h3 = 0.3 [m]
dh1/dt = (q - k1 * h1) / A
dh2/dt = (k1 * h1 - k2 * h2) / A
dh3/dt = (k2 * h2 - k3 * h3) / A
output l1 = h1 [m]
output l3 = h3 [m]
`

async function cascade(n: number): Promise<{ n: number; ms: number; sims: number; iters: number; perSample: number; ok: boolean; csvMs: number }> {
  const model = compileModel(CASCADE)
  const dt = 2
  const t = Float64Array.from({ length: n }, (_, i) => i * dt)
  // feed switches every 600 s in a fixed pseudo-random pattern
  const rnd = gaussian(17)
  const level: number[] = []
  for (let i = 0; i * 300 < n * dt + 300; i++) level.push(rnd() > 0 ? 0.004 : 0.001)
  const qv = Float64Array.from(t, (ti) => level[Math.floor(ti / 300)])
  const truth = Float64Array.from(model.params.map((p) => p.value))
  truth.set([1.2, 0.006, 0.004, 0.003])
  const sim = simulate(model, { tOut: t, inputs: [{ t, v: qv }], p: truth, rtol: 1e-9, maxSteps: 50 * n })
  const noise = gaussian(99)
  const l1 = new Float64Array(n)
  const l3 = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    l1[i] = sim.y[2 * i] + 0.002 * noise()
    l3[i] = sim.y[2 * i + 1] + 0.002 * noise()
  }
  // the same sheet of data as a CSV file: time, the input on every row, two outputs
  const lines = ['t [s],q [m^3/s],l1 [m],l3 [m]']
  for (let i = 0; i < n; i++) lines.push(`${t[i]},${qv[i]},${l1[i].toPrecision(8)},${l3[i].toPrecision(8)}`)
  const text = lines.join('\n')
  const c0 = performance.now()
  const table = parseCsv(text, { file: `cascade-${n}.csv` })
  const csvMs = performance.now() - c0
  if (table.time.values.length !== n) throw new Error('csv rows lost')
  const spec: ProblemSpec = { experiments: [{ name: `n=${n}`, time: t, outputs: { l1, l3 }, inputs: { q: { t, v: qv } } }] }
  const res = await runFit(model, spec, { rtol: 1e-7 })
  const ok = res.status === 'converged' && Math.abs(res.parameters[0].value - 0.006) < 5 * (res.parameters[0].stdError ?? Infinity)
  return { n, ms: res.elapsedMs, sims: res.simulations, iters: res.iterations, perSample: (res.elapsedMs * 1000) / n, ok, csvMs }
}

async function scaling(): Promise<void> {
  console.log('\n3-state cascade, 3 free parameters, 2 outputs, the feed input on every row, rtol 1e-7, lm from the sheet values:')
  const crow: string[][] = [['samples', 'ms', 'iterations', 'simulations', 'ms per simulation', 'µs per sample', 'CSV parse ms', 'converged near truth']]
  const got: Record<number, { ms: number; sims: number; csvMs: number }> = {}
  for (const n of [1_000, 10_000, 100_000]) {
    const c = await cascade(n)
    got[n] = c
    crow.push([String(c.n), g(c.ms), String(c.iters), String(c.sims), g(c.ms / c.sims, 3), g(c.perSample, 3), g(c.csvMs, 3), c.ok ? 'yes' : 'NO'])
  }
  console.log(pad(crow))
  const a = got[10_000]
  const b = got[100_000]
  console.log(`\ntime(100 k)/time(10 k): whole fit ${g(b.ms / a.ms, 3)}, per simulation ${g((b.ms / b.sims) / (a.ms / a.sims), 3)}, CSV parsing ${g(b.csvMs / a.csvMs, 3)} (goal: at most 10)`)
}

async function main(): Promise<void> {
  if (process.argv.includes('--scaling')) return scaling()
  if (process.argv.includes('shooting')) {
    console.log('single against multiple shooting only (`npm run bench:fit -- shooting`):')
    console.log(pad(await shooting()))
    return
  }
  if (process.argv.includes('threads')) {
    console.log('segments of one multiple-shooting fit over threads (`npm run bench:fit -- threads`; predator–prey, 2 000 samples × 2, 40 segments):')
    console.log(await segmentThreads())
    return
  }
  console.log('Pewter fit benchmark (prints figures; not a test). Machine: 2 shared cores; NIST times are the best of 15 (Pewter) and 5 (scipy) runs, medians in brackets.\n')
  const ours = await nistPewter()
  const theirs = nistScipy()
  const header = ['NIST StRD problem', 'Pewter ms', 'iterations', 'simulations', 'SSE', 'scipy ms', 'scipy sims', 'scipy SSE', 'scipy/Pewter']
  const rows = ours.map((r) => {
    const s = typeof theirs === 'string' ? undefined : theirs.find((x) => x.name === r.name)
    return [r.name, `${g(r.ms)} (${g(r.msMedian)})`, String(r.iters), String(r.sims), g(r.sse, 11), s ? `${g(s.ms)} (${g(s.msMedian)})` : '—', s ? String(s.sims) : '—', s ? g(s.sse, 11) : '—', s ? `${g(s.ms / r.ms, 3)}×` : '—']
  })
  console.log(pad([header, ...rows]))
  if (typeof theirs === 'string') console.log(`\nscipy comparison skipped: ${theirs}`)
  else {
    const ratio = ours.reduce((a, r) => a + r.ms, 0) > 0 ? theirs.reduce((a, x) => a + x.ms, 0) / ours.reduce((a, r) => a + r.ms, 0) : NaN
    console.log(`\ntotal scipy time / total Pewter time: ${g(ratio, 3)}× (goal: at least 10×)`)
    const med = theirs.reduce((x, t) => x + t.msMedian, 0) / ours.reduce((x, r) => x + r.msMedian, 0)
    console.log(`the same from the medians: ${g(med, 3)}× (a loaded machine spreads both; compare best-of figures)`)
  }
  await scaling()
  console.log('\nsingle against multiple shooting from the sheet start (best of 3 runs; simulations count whole-record and segment simulations alike, segment sims are those of the shooting phase before the single-shooting polish):')
  console.log(pad(await shooting()))
  console.log('\nsegments of one multiple-shooting fit over threads (predator–prey, 2 000 samples × 2, 40 segments; 2 cores shared with other work):')
  console.log(await segmentThreads())
}

main().catch((e) => {
  console.error(e)
  process.exitCode = 1
})
