// `pewter linearize` and `pewter export` on local files.
import { describe, expect, it, vi } from 'vitest'
import { execFile } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync, existsSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { run as linearize } from '../../server/cli/linearize'
import { run as exportCmd } from '../../server/cli/export'
import { linearAnalysis } from '../../shared/api/handover'
import { TANK } from './sheets'

const root = join(__dirname, '..', '..')
const dir = mkdtempSync(join(tmpdir(), 'pewter-cli-lin-'))
const sheet = join(dir, 'tank.sheet')
writeFileSync(sheet, TANK)

async function capture(fn: (a: string[]) => Promise<number>, args: string[]) {
  let stdout = ''
  let stderr = ''
  const so = vi.spyOn(process.stdout, 'write').mockImplementation((c: string | Uint8Array) => { stdout += String(c); return true })
  const se = vi.spyOn(process.stderr, 'write').mockImplementation((c: string | Uint8Array) => { stderr += String(c); return true })
  try {
    return { code: await fn(args), stdout, stderr }
  } finally {
    so.mockRestore()
    se.mockRestore()
  }
}

describe('pewter linearize', () => {
  it('prints the analysis as JSON with the fields the hand-over promises', async () => {
    const r = await capture(linearize, [sheet, '--input', 'q=0.003', '--set', 'a=0.0015', '--json', '--frequencies', '10'])
    expect(r.code).toBe(0)
    const a = linearAnalysis.parse(JSON.parse(r.stdout))
    // h* = q²/(2 g a²) and ∂f/∂h = −q/(2 A h*) (Torricelli outflow, closed form)
    const hs = 0.003 ** 2 / (2 * 9.81 * 0.0015 ** 2)
    expect(a.x[0]).toBeCloseTo(hs, 10)
    expect(a.A[0][0]).toBeCloseTo(-0.003 / (2 * 0.8 * hs), 13)
    expect(a.poles[0]).toMatchObject({ im: 0, damping: 1 })
    expect(a.poles[0].timeConstant).toBeCloseTo((2 * 0.8 * hs) / 0.003, 8)
    expect(a.dcGain![0][0]).toBeCloseTo(0.003 / (9.81 * 0.0015 ** 2), 8)
    expect(a.states).toEqual(['h'])
    expect(a.provenance).toMatch(/a = 0\.0015 set by hand/)
    // level out, inflow in, no feedthrough: relative degree 1, no zeros, the 2×2 pencil of full normal rank
    expect(a.systemZeros).toMatchObject({ zeros: [], normalRank: 2, rows: 2, columns: 2 })
  })
  it('applies a fit result file and propagates its covariance', async () => {
    // a synthetic fit result (no real fit): only the fields the hand-over reads are meaningful
    const fit = {
      status: 'converged', convergedBy: 'gradient', reasonStart: null, reason: 'synthetic', sse: 1, iterations: 1, simulations: 1, elapsedMs: 1,
      parameters: [{ name: 'a', experiment: null, unit: 'm^2', value: 0.0011, start: 0.001, stdError: 0.00002, determined: true, ci95: [null, null], lower: 1e-5, upper: 0.1, atBound: null, logTransformed: true }],
      initialStates: [], outputs: [], correlation: { names: ['a'], matrix: [[1]] }, warnings: [],
      method: 'lm', weighting: 'sheet', nObservations: 10, nEstimated: 1, dof: 9, s2: 1, tQuantile: 2.26, aic: null, bic: null,
      costHistory: [], starts: [], bestStart: 0, tolerances: { rtol: 1e-6, atol: 1e-9, ftol: 1e-8, xtol: 1e-8, gtol: 1e-8 }, landscape: null, equationError: null, cautions: [], notes: [],
      identifiability: { cutoff: 1e-6, relativeSingularValues: [1], rank: 1, undetermined: [], combinations: [], advice: null },
      validationStart: 'sheet', validationInitialStates: [],
    }
    const f = join(dir, 'fit.json')
    writeFileSync(f, JSON.stringify(fit))
    const r = await capture(linearize, [sheet, '--fit', f, '--json', '--frequencies', '0'])
    expect(r.stderr).toBe('')
    expect(r.code).toBe(0)
    const a = JSON.parse(r.stdout)
    expect(a.parameters.find((p: { name: string }) => p.name === 'a').value).toBe(0.0011)
    // pole ∝ a²: sd/|pole| = 2 sd(a)/a (delta method, closed form)
    expect(a.poles[0].sdRe / Math.abs(a.poles[0].re)).toBeCloseTo((2 * 0.00002) / 0.0011, 6)
    const summary = await capture(linearize, [sheet, '--fit', f])
    expect(summary.stdout).toMatch(/time constant/)
    expect(summary.stdout).toMatch(/Caution/)
  })
  it('says what is wrong with the command line', async () => {
    expect((await capture(linearize, [sheet, '--set', 'zz=1'])).stderr).toMatch(/no parameter named 'zz'/)
    const both = await capture(linearize, [sheet, '--at-steady', '--t', '3'])
    expect(both.code).toBe(2)
    expect(both.stderr).toMatch(/either --at-steady or --t/)
    const none = await capture(linearize, [join(dir, 'missing.sheet')])
    expect(none.code).toBe(2)
  })
})

describe('pewter export', () => {
  it('writes every format, each carrying provenance and caution', async () => {
    for (const [format, out] of [['js', 'tank.mjs'], ['fmu', 'tank.fmu'], ['ss-json', 'ss.json'], ['ss-csv', 'ss.csv'], ['c', 'csrc']] as const) {
      const r = await capture(exportCmd, [sheet, '--format', format, '--out', join(dir, out), '--set', 'A=0.9'])
      expect(r.code, r.stderr).toBe(0)
    }
    expect(readFileSync(join(dir, 'tank.mjs'), 'utf8')).toContain('A = 0.9 set by hand')
    expect(readFileSync(join(dir, 'ss.csv'), 'utf8')).toMatch(/# model version: sheet file tank\.sheet/)
    expect(JSON.parse(readFileSync(join(dir, 'ss.json'), 'utf8')).caution).toMatch(/^Caution/)
    expect(existsSync(join(dir, 'csrc', 'gravity_drained_tank.c'))).toBe(true)
    expect(readFileSync(join(dir, 'tank.fmu')).readUInt32LE(0)).toBe(0x04034b50)
    const bad = await capture(exportCmd, [sheet, '--format', 'dll', '--out', join(dir, 'x')])
    expect(bad.code).toBe(2)
    expect(bad.stderr).toMatch(/--format must be one of js, c, fmu, ss-json, ss-csv/)
  })
  it('runs through the real entry point', async () => {
    const tsx = join(root, 'node_modules', '.bin', 'tsx')
    const out = await new Promise<string>((resolve, reject) => {
      execFile(tsx, ['server/cli/index.ts', 'linearize', sheet, '--json', '--frequencies', '0'], { cwd: root, timeout: 90_000 }, (err, stdout) => (err ? reject(err) : resolve(stdout)))
    })
    expect(JSON.parse(out).A[0][0]).toBeLessThan(0)
  }, 100_000)
})
