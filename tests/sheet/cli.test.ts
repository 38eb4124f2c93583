// `pewter check <sheet-file>`: one JSON object on stdout; exit 0 clean, 1 errors, 2 bad arguments
// or unreadable file. Runs the real command line.
import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { describe, expect, it, vi } from 'vitest'
import { run } from '../../server/cli/check'
import { MODELS_DIR } from './helpers'

const ROOT = join(__dirname, '..', '..')
/** the command line as users run it: the ahead-of-time bundle (rebuilt first when a source is newer) */
function pewter(...args: string[]) {
  const r = spawnSync(process.execPath, [join(ROOT, 'scripts', 'pewter.mjs'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 })
  return { code: r.status, out: r.stdout, err: r.stderr }
}
/** the same from the TypeScript sources */
function pewterFromSources(...args: string[]) {
  const r = spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'server', 'cli', 'index.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 120_000 })
  return { code: r.status, out: r.stdout, err: r.stderr }
}

describe('the command line built ahead of time', () => {
  it('is rebuilt from its sources and answers exactly as the sources do', async () => {
    const { buildCli, cliBundleStale, CLI_BUNDLE } = await import('../../scripts/cli-bundle.mjs')
    await buildCli()
    expect(cliBundleStale()).toBe(false)
    const sheet = join(MODELS_DIR, 'heated-buffer-vessel.sheet')
    const bundled = spawnSync(process.execPath, [join(ROOT, 'scripts', 'pewter.mjs'), 'check', sheet], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 })
    expect(bundled.status).toBe(0)
    expect(JSON.parse(bundled.stdout)).toEqual(JSON.parse(pewterFromSources('check', sheet).out))
    const usage = spawnSync(process.execPath, [CLI_BUNDLE, 'nonsense'], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 })
    expect(usage.status).toBe(2)
    expect(usage.stderr).toMatch(/usage: pewter <check\|simulate\|fit\|submit\|linearize\|export>/)
  }, 180_000)
})

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
  }, 120_000)

  it('a sheet with errors: exit 1 and the diagnostics with their places', () => {
    const dir = mkdtempSync(join(tmpdir(), 'pewter-check-'))
    const f = join(dir, 'bad.sheet')
    writeFileSync(f, "state h = 1 [m]\ndh/dt = -kk * h\noutput y = h\n")
    const r = pewter('check', f)
    expect(r.code).toBe(1)
    const j = JSON.parse(r.out)
    expect(j.ok).toBe(false)
    expect(j.diagnostics).toEqual([{ line: 2, column: 10, endColumn: 12, severity: 'error', message: "unknown name 'kk'" }])
  }, 120_000)

  it('bad arguments or an unreadable file: exit 2 (through the real command line)', () => {
    const r = pewter('check', join(MODELS_DIR, 'no-such-file.sheet'))
    expect(r.code).toBe(2)
    expect(r.err).toMatch(/cannot read/)
    expect(r.out).toBe('')
  }, 120_000)

  it('bad arguments: exit 2 (the check module in-process)', async () => {
    const err = vi.spyOn(process.stderr, 'write').mockImplementation(() => true)
    const out = vi.spyOn(process.stdout, 'write').mockImplementation(() => true)
    try {
      expect(await run([])).toBe(2)
      expect(await run(['a.sheet', 'b.sheet'])).toBe(2)
      expect(await run(['--bogus'])).toBe(2)
      expect(await run([MODELS_DIR])).toBe(2)
      expect(out).not.toHaveBeenCalled()
      expect(String(err.mock.calls[0][0])).toMatch(/no sheet file given/)
      expect(await run([join(MODELS_DIR, 'air-receiver.sheet')])).toBe(0)
      expect(JSON.parse(String(out.mock.calls[0][0])).ok).toBe(true)
    } finally {
      err.mockRestore()
      out.mockRestore()
    }
  })
})
