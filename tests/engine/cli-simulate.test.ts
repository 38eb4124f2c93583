import { describe, expect, it, vi } from 'vitest'
import { execFile } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { run } from '../../server/cli/simulate'

const root = join(__dirname, '..', '..')
const tsx = join(root, 'node_modules', '.bin', 'tsx')

/** through the real entry point (server/cli/index.ts), as `npm run -s pewter -- …` does */
function spawnPewter(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(tsx, ['server/cli/index.ts', ...args], { cwd: root, timeout: 60_000 }, (err, stdout, stderr) => {
      const code = err ? (typeof (err as { code?: unknown }).code === 'number' ? (err as { code: number }).code : 99) : 0
      resolve({ code, stdout, stderr })
    })
  })
}

/** in-process (fast): the sub-command's run() with stdout/stderr captured */
async function pewter(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  const [cmd, ...rest] = args
  expect(cmd).toBe('simulate')
  let stdout = ''
  let stderr = ''
  const so = vi.spyOn(process.stdout, 'write').mockImplementation((c: string | Uint8Array) => { stdout += String(c); return true })
  const se = vi.spyOn(process.stderr, 'write').mockImplementation((c: string | Uint8Array) => { stderr += String(c); return true })
  try {
    const code = await run(rest)
    return { code, stdout, stderr }
  } finally {
    so.mockRestore()
    se.mockRestore()
  }
}

// Arenstorf orbit: Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed., Sec. II.0 (period and y(0)).
const T = '17.0652165601579625588917206249'
const y0 = [0.994, 0, 0, -2.00158510637908252240537862224]
const sheet = 'tests/engine/fixtures/arenstorf.sheet'

describe('pewter simulate', () => {
  it('reproduces the Arenstorf check with rk45 at 1e-12 (CSV with states, through the pewter entry point)', { timeout: 180_000 }, async () => {
    const r = await spawnPewter(['simulate', sheet, '--t-end', T, '--at', `0,8.5,${T}`, '--solver', 'rk45', '--rtol', '1e-12', '--atol', '1e-12', '--states'])
    expect(r.code, r.stderr).toBe(0)
    const lines = r.stdout.trim().split('\n')
    expect(lines[0]).toBe('t,p1,p2,y1,y2,v1,v2')
    expect(lines).toHaveLength(4)
    const last = lines[3].split(',').map(Number)
    expect(last[0]).toBeCloseTo(Number(T), 12)
    for (let i = 0; i < 4; i++) expect(Math.abs(last[3 + i] - y0[i])).toBeLessThan(1e-6)
  })

  it('reproduces the Arenstorf check with odex at 1e-11 (JSON with stats)', async () => {
    const r = await pewter(['simulate', sheet, '--t-end', T, '--step', '4', '--solver', 'odex', '--rtol', '1e-11', '--atol', '1e-11', '--format', 'json'])
    expect(r.code, r.stderr).toBe(0)
    const j = JSON.parse(r.stdout)
    expect(j.t[0]).toBe(0)
    expect(j.t[j.t.length - 1]).toBeCloseTo(Number(T), 12)
    const k = j.t.length - 1
    expect(Math.abs(j.states.y1[k] - y0[0])).toBeLessThan(1e-6)
    expect(Math.abs(j.states.v2[k] - y0[3])).toBeLessThan(1e-6)
    expect(j.outputs.p1[k]).toBe(j.states.y1[k])
    expect(j.stats.method).toBe('odex')
    expect(j.stats.steps).toBeGreaterThan(10)
    expect(j.stats.rhsEvals).toBeGreaterThan(j.stats.steps)
    expect(typeof j.stats.elapsedMs).toBe('number')
  })

  it('bad arguments: one line, exit 2; a failed integration: message, exit 1', async () => {
    const order = await pewter(['simulate', sheet, '--t-end', '5', '--at', '3,1'])
    expect(order.code).toBe(2)
    expect(order.stderr.trim().split('\n')).toHaveLength(1)
    expect(order.stderr).toMatch(/--at: times must increase, 1 follows 3/)
    const missing = await pewter(['simulate', sheet])
    expect(missing.code).toBe(2)
    expect(missing.stderr).toMatch(/--t-end is required/)
    const solver = await pewter(['simulate', sheet, '--t-end', '1', '--solver', 'euler'])
    expect(solver.code).toBe(2)
    const limit = await pewter(['simulate', sheet, '--t-end', '5', '--max-steps', '10'])
    expect(limit.code).toBe(1)
    expect(limit.stderr).toMatch(/step limit of 10 steps exceeded/)
  })

  it('reads input traces from CSV (declared units), --set overrides, NaN rows are named', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'pewter-sim-'))
    // invented data for the Tinmoor Works syrup line (mixing-line template)
    const csv = join(dir, 'flows.csv')
    writeFileSync(csv, 't,q_s,q_w\n0,0.8,4\n30,0.8,4\n31,1.2,4\n200,1.2,4\n')
    const r = await pewter(['simulate', 'models/mixing-line.sheet', '--t-end', '200', '--at', '0,20,200', '--inputs', csv, '--set', 'tau=5', '--rtol', '1e-9', '--format', 'json'])
    expect(r.code, r.stderr).toBe(0)
    const j = JSON.parse(r.stdout)
    // steady blend concentration after the change: c = q_s c_s / (q_s + q_w) = 1.2·650/5.2 = 150 kg/m³
    expect(Math.abs(j.outputs.conc[2] - 150)).toBeLessThan(1e-3)
    const bad = join(dir, 'bad.csv')
    writeFileSync(bad, 't,q_s,q_w\n0,0.8,4\n10,NaN,4\n20,0.8,4\n')
    const e = await pewter(['simulate', 'models/mixing-line.sheet', '--t-end', '20', '--inputs', bad])
    expect(e.code).toBe(2)
    expect(e.stderr).toMatch(/row 3, column 'q_s'/)
  })
})
