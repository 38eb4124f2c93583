// `pewter check <sheet-file>`: one JSON object on stdout; exit 0 clean, 1 errors, 2 bad arguments
// or unreadable file. Runs the real command line.
import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { MODELS_DIR } from './helpers'

const ROOT = join(__dirname, '..', '..')
function pewter(...args: string[]) {
  const r = spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'server', 'cli', 'index.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 })
  return { code: r.status, out: r.stdout, err: r.stderr }
}

describe('pewter check', () => {
  it('a clean template: exit 0 and the summary', () => {
    const r = pewter('check', join(MODELS_DIR, 'heated-buffer-vessel.sheet'))
    expect(r.code).toBe(0)
    const j = JSON.parse(r.out)
    expect(j.ok).toBe(true)
    expect(j.diagnostics).toEqual([])
    expect(j.states.map((s: { name: string }) => s.name)).toEqual(['h', 'T'])
    expect(j.parameters).toContainEqual({ name: 'Cv', value: 4e-3, unit: 'm^2.5/s', lower: 1e-4, upper: 1e-1, fixed: false })
    expect(j.parameters).toContainEqual({ name: 'A', value: 1.2, unit: 'm^2', lower: null, upper: null, fixed: true })
    expect(j.inputs.map((s: { name: string }) => s.name)).toEqual(['q_in', 'T_feed', 'P_h', 'opening'])
    expect(j.outputs).toContainEqual({ name: 'level', unit: 'm', sigma: 0.005 })
  })

  it('a sheet with errors: exit 1 and the diagnostics with their places', () => {
    const dir = mkdtempSync(join(tmpdir(), 'pewter-check-'))
    const f = join(dir, 'bad.sheet')
    writeFileSync(f, "state h = 1 [m]\nh' = -kk * h\noutput y = h\n")
    const r = pewter('check', f)
    expect(r.code).toBe(1)
    const j = JSON.parse(r.out)
    expect(j.ok).toBe(false)
    expect(j.diagnostics).toEqual([{ line: 2, column: 7, endColumn: 9, severity: 'error', message: "unknown name 'kk'" }])
  })

  it('bad arguments or an unreadable file: exit 2', () => {
    expect(pewter('check').code).toBe(2)
    expect(pewter('check', 'a.sheet', 'b.sheet').code).toBe(2)
    const r = pewter('check', join(MODELS_DIR, 'no-such-file.sheet'))
    expect(r.code).toBe(2)
    expect(r.err).toMatch(/cannot read/)
    expect(pewter('check', MODELS_DIR).code).toBe(2)
  })
})
