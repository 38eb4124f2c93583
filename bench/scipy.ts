/**
 * scipy's solve_ivp timed beside the engine in the same benchmark run (python3 with numpy and scipy,
 * when installed). The caller's Python body reads `jobs` (the JSON it passes), fills the dict `out`
 * and times each solve with `timed(f, span, y0, kw)`: the best wall-clock milliseconds of at least 3
 * calls, more while the time budget lasts (at most 20; a call over 5 s ends the series), and the
 * last solution.
 */
import { spawnSync } from 'node:child_process'

const prelude = (budget: number) => `
import json, sys, time
import numpy as np
from scipy.integrate import solve_ivp
jobs = json.loads(sys.stdin.read())
out = {}
def timed(f, span, y0, kw):
    ts = []
    sol = None
    t0 = time.perf_counter()
    while len(ts) < 3 or (time.perf_counter() - t0 < ${budget} and len(ts) < 20):
        a = time.perf_counter()
        sol = solve_ivp(f, span, y0, **kw)
        ts.append((time.perf_counter() - a) * 1000)
        if ts[-1] > 5000: break
    return min(ts), sol
`

/**
 * Runs `body` (Python, at the top level) on `jobs`; returns `out` keyed as the body keys it, or why
 * the comparison was skipped (no python3, no scipy, a failure).
 */
export function runScipy<Row>(
  jobs: unknown, body: string, opts: { budgetSeconds: number; timeoutMs: number; maxBuffer: number },
): Map<string, Row> | string {
  const script = `${prelude(opts.budgetSeconds)}${body}\nprint(json.dumps(out))\n`
  const r = spawnSync('python3', ['-c', script], { input: JSON.stringify(jobs), encoding: 'utf8', timeout: opts.timeoutMs, maxBuffer: opts.maxBuffer })
  if (r.status !== 0) return `scipy comparison skipped: ${r.error ? r.error.message : (r.stderr || '').trim().split('\n').pop()}`
  return new Map(Object.entries(JSON.parse(r.stdout) as Record<string, Row>))
}
