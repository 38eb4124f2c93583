/**
 * `npm run bench:cli`: start-to-exit time of `pewter check` on a template, from the ahead-of-time
 * bundle (what `npm run -s pewter` runs, after its freshness check) and, for comparison, from the
 * TypeScript sources through tsx. Median of 7 runs each; prints figures (target: ≤ 0.5 s bundled).
 */
import { spawnSync } from 'node:child_process'
import { loadavg } from 'node:os'
import { performance } from 'node:perf_hooks'
import { ensureCli } from '../scripts/cli-bundle.mjs'

const SHEET = 'models/heated-buffer-vessel.sheet'

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b)
  return s[Math.floor(s.length / 2)]
}

function time(args: string[], runs = 7): number {
  const out: number[] = []
  for (let i = 0; i < runs; i++) {
    const t0 = performance.now()
    const r = spawnSync(process.execPath, args, { encoding: 'utf8' })
    out.push(performance.now() - t0)
    if (r.status !== 0) throw new Error(`${args.join(' ')} exited ${r.status}: ${r.stderr}`)
  }
  return median(out)
}

await ensureCli()
const bundled = time(['scripts/pewter.mjs', 'check', SHEET])
const sources = time(['--import', 'tsx', 'server/cli/index.ts', 'check', SHEET], 3)
console.log(`pewter check, bundled (scripts/pewter.mjs): ${(bundled / 1000).toFixed(2)} s median of 7 (target ≤ 0.5 s)`)
console.log(`machine load average (1 min): ${loadavg()[0].toFixed(1)} — times grow with it`)
console.log(`pewter check, from sources through tsx:     ${(sources / 1000).toFixed(2)} s median of 3`)
